/**
 * Engine benchmark: probit with k = 10 covariates and 500 clusters at N = 1e4, 1e5, 1e6,
 * against statsmodels on the same data (written to bench/tmp/ as CSV).
 *
 * Each size is fitted in its own child process so that peak RSS belongs to that size alone
 * (the parent writes the CSV for statsmodels from the same seeded generator).
 * Our fits use the engine defaults, including the warm start on a 5% subsample for n ≥ 40 000.
 * Timings are the best of several runs on both sides; statsmodels is timed inside Python
 * (CSV loading excluded), our side excludes data generation and design construction.
 * Run: npx tsx bench/engine.bench.ts
 */
import { spawnSync } from 'node:child_process'
import { closeSync, mkdirSync, openSync, writeSync } from 'node:fs'
import { dirname, join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { computeCovariance, designFromMatrix, fitBinary, marginalEffects } from '../shared/utils/stats/index'
import { mergeResults, printTable, round, type BenchEntry } from './lib/results-file'
import { normal, prng } from '../shared/utils/random/prng'

const here = dirname(fileURLToPath(import.meta.url))
const tmpDir = join(here, 'tmp')
const SIZES = [1e4, 1e5, 1e6]
const K = 10
const CLUSTERS = 500
const PYTHON = '/usr/bin/python3'

/** Values rounded to 1e-6 so that the CSV text is exactly the doubles we fit. */
function round6(v: number): number {
  return Math.round(v * 1e6) / 1e6
}

function generate(n: number): { X: Float64Array, y: Float64Array, cluster: Int32Array } {
  const u = prng(20240611 + n)
  const k = K + 1
  const X = new Float64Array(n * k)
  const y = new Float64Array(n)
  const cluster = new Int32Array(n)
  const villageEffect = Array.from({ length: CLUSTERS }, () => 0.3 * normal(u))
  const beta = [-0.3, 0.5, -0.4, 0.3, -0.2, 0.25, 0.1, -0.15, 0.2, -0.1, 0.05]
  for (let i = 0; i < n; i++) {
    const g = Math.floor(u() * CLUSTERS)
    cluster[i] = g
    X[i * k] = 1
    let eta = beta[0]!
    for (let j = 1; j <= K; j++) {
      // Mix of standard normals and a few skewed/binary-ish covariates.
      const v = j <= 6 ? round6(normal(u)) : j <= 8 ? round6(-Math.log(1 - u())) : (u() < 0.4 ? 1 : 0)
      X[i * k + j] = v
      eta += beta[j]! * v
    }
    y[i] = eta + villageEffect[g]! + normal(u) > 0 ? 1 : 0
  }
  return { X, y, cluster }
}

function writeCsv(path: string, X: Float64Array, y: Float64Array, cluster: Int32Array): void {
  const k = K + 1
  const n = y.length
  const fd = openSync(path, 'w')
  writeSync(fd, `y,cluster,${Array.from({ length: K }, (_, j) => `x${j + 1}`).join(',')}\n`)
  const lines: string[] = []
  for (let i = 0; i < n; i++) {
    let line = `${y[i]},${cluster[i]}`
    for (let j = 1; j < k; j++) line += `,${X[i * k + j]}`
    lines.push(line)
    if (lines.length === 20000 || i === n - 1) {
      writeSync(fd, `${lines.join('\n')}\n`)
      lines.length = 0
    }
  }
  closeSync(fd)
}

function best(reps: number, f: () => void): number {
  let t = Infinity
  for (let r = 0; r < reps; r++) {
    const t0 = performance.now()
    f()
    t = Math.min(t, performance.now() - t0)
  }
  return t
}

function reps(n: number): number {
  return n <= 1e4 ? 7 : n <= 1e5 ? 4 : 2
}

function child(n: number): void {
  const { X, y, cluster } = generate(n)
  const names = Array.from({ length: K }, (_, j) => `x${j + 1}`)
  const design = designFromMatrix(X, y, names, { cluster })
  let iterations = 0
  let coef: number[] = []
  const fitMs = best(reps(n), () => {
    const fit = fitBinary(design, 'probit')
    iterations = fit.iterations.length - 1
    coef = Array.from(fit.coef)
  })
  const fullMs = best(reps(n), () => {
    const fit = fitBinary(design, 'probit')
    const cov = computeCovariance(design, fit, 'cluster')
    marginalEffects(design, fit, cov, { kind: 'ame' })
  })
  const rssMb = process.resourceUsage().maxRSS / 1024
  const designMb = (X.byteLength + y.byteLength + cluster.byteLength) / 1024 / 1024
  process.stdout.write(`${JSON.stringify({ n, fitMs, fullMs, iterations, rssMb, designMb, coef })}\n`)
}

type Entry = BenchEntry

function peer(csv: string, n: number): { fit_ms: number, full_ms: number, iterations: number, version: string, coef: number[] } | null {
  const r = spawnSync(PYTHON, [join(here, 'statsmodels_peer.py'), csv, String(reps(n))], { encoding: 'utf8', maxBuffer: 1 << 24 })
  if (r.status !== 0) {
    console.log(`statsmodels not available via ${PYTHON} (${(r.stderr || String(r.error)).trim().split('\n').pop()}); reporting our timings only`)
    return null
  }
  return JSON.parse(r.stdout.trim().split('\n').pop()!)
}

function main(): void {
  mkdirSync(tmpDir, { recursive: true })
  const self = fileURLToPath(import.meta.url)
  const entries: Entry[] = []
  const rows: string[][] = []
  for (const n of SIZES) {
    // The parent writes the CSV (same seed, same numbers) so the child's peak RSS is the engine's.
    const csv = join(tmpDir, `probit-${n}.csv`)
    {
      const data = generate(n)
      writeCsv(csv, data.X, data.y, data.cluster)
    }
    const r = spawnSync(process.execPath, [...process.execArgv, self, '--child', String(n)], { encoding: 'utf8', maxBuffer: 1 << 24 })
    if (r.status !== 0) throw new Error(`benchmark child for n=${n} failed: ${r.stderr}`)
    const ours = JSON.parse(r.stdout.trim().split('\n').pop()!) as { n: number, fitMs: number, fullMs: number, iterations: number, rssMb: number, designMb: number, coef: number[] }
    const sm = peer(csv, n)
    if (sm) {
      const maxDiff = Math.max(...ours.coef.map((c, j) => Math.abs(c - sm.coef[j]!)))
      if (maxDiff > 1e-6) console.log(`warning: coefficients differ from statsmodels by ${maxDiff.toExponential(2)} at n=${n}`)
    }
    const peerName = sm ? `statsmodels ${sm.version}` : 'statsmodels'
    for (const [name, oursMs, peerMs] of [
      ['probit fit', ours.fitMs, sm?.fit_ms ?? null],
      ['probit fit+cluster+AME', ours.fullMs, sm?.full_ms ?? null]
    ] as const) {
      const ratio = peerMs ? oursMs / peerMs : null
      entries.push({ name, n, ours_ms: round(oursMs), peer: peerName, peer_ms: peerMs === null ? null : round(peerMs), ratio: ratio === null ? null : round(ratio, 3), peak_rss_mb: round(ours.rssMb) })
      rows.push([name, String(n), oursMs.toFixed(1), String(ours.iterations), ours.rssMb.toFixed(0), ours.designMb.toFixed(0), peerMs === null ? '—' : peerMs.toFixed(1), ratio === null ? '—' : ratio.toFixed(3)])
    }
  }
  printTable(['benchmark', 'n', 'ours ms', 'iter', 'peak RSS MB', 'data MB', 'statsmodels ms', 'ratio'], rows)
  mergeResults(entries)
}

const childAt = process.argv.indexOf('--child')
if (childAt >= 0) child(Number(process.argv[childAt + 1]))
else main()
