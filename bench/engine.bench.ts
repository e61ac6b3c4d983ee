/**
 * Engine benchmark: probit with k = 10 covariates and 500 clusters at N = 1e4, 1e5, 1e6,
 * against statsmodels on the same data (written to bench/tmp/ as CSV).
 *
 * Each size is fitted in its own child process so that peak RSS belongs to that size alone
 * (the parent writes the CSV for statsmodels from the same seeded generator).
 * Our fits use the engine defaults, including the warm start on a 5% subsample for n ≥ 40 000.
 * Timings are the best of several runs on both sides; statsmodels is timed inside Python
 * (CSV loading excluded), our side excludes data generation and design construction.
 * Ours is measured on one thread (the engine's default) and on every core (the row passes split across
 * threads over shared memory, server/workers/pass-pool.ts, as the CLI and the server's fit worker use them),
 * and each pass is timed alone beside the bytes it reads (GB/s), to show the distance to memory bandwidth.
 * The CSV path: `npm run fit` on the 1e6 file (whole process) against a Python process that reads the same
 * file with pandas and fits statsmodels' probit with cluster SEs (whole process too).
 * Run: npx tsx bench/engine.bench.ts (FURROWCAST_BENCH_SIZES=100000 for one size)
 */
import { spawnSync } from 'node:child_process'
import { build } from 'esbuild'
import { closeSync, mkdirSync, openSync, writeSync } from 'node:fs'
import { dirname, join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { isMainThread } from 'node:worker_threads'
import { clusterScoresRange, computeCovariance, designFromMatrix, evaluate, fitBinary, getLink, marginalEffects, type ParallelPasses } from '../shared/utils/stats/index'
import { startPassHelpers } from '../server/workers/pass-pool'
import { mergeResults, printTable, round, type BenchEntry } from './lib/results-file'
import { normal, prng } from '../shared/utils/random/prng'

const here = dirname(fileURLToPath(import.meta.url))
const tmpDir = join(here, 'tmp')
// FURROWCAST_BENCH_SIZES=100000 (comma-separated) runs chosen sizes only, e.g. to re-measure one target quickly.
const SIZES = process.env.FURROWCAST_BENCH_SIZES ? process.env.FURROWCAST_BENCH_SIZES.split(',').map(Number) : [1e4, 1e5, 1e6]
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

/**
 * Runs per timing, the best taken, on both sides (statsmodels gets the same count). 30 at 10^4: V8 optimises the pass
 * pool's helper-thread code only after about 20 fits of that size (4.5–5 ms each before, 2.0–2.5 ms after), so with 7
 * runs the figure was that of unoptimised code. (In the app a fit of 10^4 rows runs on one thread: PARALLEL_MIN_ROWS.)
 */
function reps(n: number): number {
  return n <= 1e4 ? 30 : n <= 1e5 ? 4 : 2
}

function timePasses(design: ReturnType<typeof designFromMatrix>, b: Float64Array, pool: ParallelPasses | null): { fused: number, cluster: number, ame: number } {
  const link = getLink('probit')
  const reps = 3
  const zero = new Float64Array(design.k)
  const fused = best(reps, () => (pool ? pool.evaluate(b, null) : evaluate(design, link, b)))
  const cluster = best(reps, () => {
    if (pool) pool.clusterScores(b, zero)
    else clusterScoresRange(design, link, b, zero, 0, design.n, new Float64Array(500 * design.k))
  })
  const fit = fitBinary(design, 'probit')
  const cov = computeCovariance(design, fit, 'cluster')
  const ame = best(reps, () => marginalEffects(design, fit, cov, { kind: 'ame', parallel: pool }))
  return { fused, cluster, ame }
}

async function child(n: number): Promise<void> {
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
  const b = Float64Array.from(coef)
  const passes1 = timePasses(design, b, null)
  // Every core: the pool copies the design into shared memory once (not timed, as the design is not).
  const helpers = await startPassHelpers(new URL(import.meta.url))
  const pool = helpers.attach(design, 'probit')
  let coefPar: number[] = []
  const fitParMs = best(reps(n), () => {
    coefPar = Array.from(fitBinary(design, 'probit', { parallel: pool }).coef)
  })
  const fullParMs = best(reps(n), () => {
    const fit = fitBinary(design, 'probit', { parallel: pool })
    const cov = computeCovariance(design, fit, 'cluster', pool)
    marginalEffects(design, fit, cov, { kind: 'ame', parallel: pool })
  })
  const passesN = timePasses(design, b, pool)
  await helpers.close()
  const maxRel = Math.max(...coef.map((c, j) => Math.abs(c - coefPar[j]!) / Math.max(1e-300, Math.abs(c))))
  const rssMb = process.resourceUsage().maxRSS / 1024
  const designMb = (X.byteLength + y.byteLength + cluster.byteLength) / 1024 / 1024
  const bytes = { fused: design.n * (design.k + 1) * 8, cluster: design.n * ((design.k + 1) * 8 + 4), ame: design.n * design.k * 8 }
  process.stdout.write(`${JSON.stringify({ n, fitMs, fullMs, fitParMs, fullParMs, threads: helpers.threads, iterations, rssMb, designMb, coef, maxRel, passes1, passesN, bytes })}\n`)
}

/** Whole-process wall time of a command (best of `times`). */
function wall(cmd: string, args: string[], times: number): number {
  let bestMs = Infinity
  for (let r = 0; r < times; r++) {
    const t0 = performance.now()
    const res = spawnSync(cmd, args, { encoding: 'utf8', maxBuffer: 1 << 26 })
    if (res.status !== 0) throw new Error(`${cmd} ${args.join(' ')} failed: ${res.stderr}`)
    bestMs = Math.min(bestMs, performance.now() - t0)
  }
  return bestMs
}

const CSV_PEER = `
import sys
import pandas as pd
import statsmodels.api as sm
df = pd.read_csv(sys.argv[1])
X = sm.add_constant(df[[c for c in df.columns if c.startswith("x")]].to_numpy(dtype=float))
sm.Probit(df["y"].to_numpy(dtype=float), X).fit(method="newton", disp=0, cov_type="cluster", cov_kwds={"groups": df["cluster"].to_numpy()})
`

type Entry = BenchEntry
type PassTimes = Record<'fused' | 'cluster' | 'ame', number>

interface ChildResult {
  n: number
  fitMs: number
  fullMs: number
  fitParMs: number
  fullParMs: number
  threads: number
  iterations: number
  rssMb: number
  designMb: number
  coef: number[]
  maxRel: number
  passes1: PassTimes
  passesN: PassTimes
  bytes: PassTimes
}

function peer(csv: string, n: number): { fit_ms: number, full_ms: number, iterations: number, version: string, coef: number[] } | null {
  const r = spawnSync(PYTHON, [join(here, 'statsmodels_peer.py'), csv, String(reps(n))], { encoding: 'utf8', maxBuffer: 1 << 24 })
  if (r.status !== 0) {
    console.log(`statsmodels not available via ${PYTHON} (${(r.stderr || String(r.error)).trim().split('\n').pop()}); reporting our timings only`)
    return null
  }
  return JSON.parse(r.stdout.trim().split('\n').pop()!)
}

async function main(): Promise<void> {
  mkdirSync(tmpDir, { recursive: true })
  // The children run this file as one plain-JavaScript bundle: the pass pool's helper threads load it too, and
  // threads get no TypeScript loader.
  const self = join(tmpDir, 'engine.bench.mjs')
  await build({ entryPoints: [fileURLToPath(import.meta.url)], outfile: self, bundle: true, platform: 'node', format: 'esm', target: 'node20', logLevel: 'warning', external: ['esbuild'] })
  const entries: Entry[] = []
  const rows: string[][] = []
  const passRows: string[][] = []
  for (const n of SIZES) {
    // The parent writes the CSV (same seed, same numbers) so the child's peak RSS is the engine's.
    const csv = join(tmpDir, `probit-${n}.csv`)
    {
      const data = generate(n)
      writeCsv(csv, data.X, data.y, data.cluster)
    }
    const r = spawnSync(process.execPath, [self, '--child', String(n)], { encoding: 'utf8', maxBuffer: 1 << 24 })
    if (r.status !== 0) throw new Error(`benchmark child for n=${n} failed: ${r.stderr}`)
    const ours = JSON.parse(r.stdout.trim().split('\n').pop()!) as ChildResult
    const sm = peer(csv, n)
    if (sm) {
      const maxDiff = Math.max(...ours.coef.map((c, j) => Math.abs(c - sm.coef[j]!)))
      if (maxDiff > 1e-6) console.log(`warning: coefficients differ from statsmodels by ${maxDiff.toExponential(2)} at n=${n}`)
    }
    const peerName = sm ? `statsmodels ${sm.version}` : 'statsmodels'
    if (ours.maxRel > 1e-10) console.log(`warning: threaded coefficients differ from one thread by ${ours.maxRel.toExponential(2)} at n=${n}`)
    for (const [name, oursMs, peerMs] of [
      ['probit fit (1 thread)', ours.fitMs, sm?.fit_ms ?? null],
      ['probit fit+cluster+AME (1 thread)', ours.fullMs, sm?.full_ms ?? null],
      [`probit fit (${ours.threads} threads)`, ours.fitParMs, sm?.fit_ms ?? null],
      [`probit fit+cluster+AME (${ours.threads} threads)`, ours.fullParMs, sm?.full_ms ?? null]
    ] as const) {
      const ratio = peerMs ? oursMs / peerMs : null
      entries.push({ name, n, ours_ms: round(oursMs), peer: peerName, peer_ms: peerMs === null ? null : round(peerMs), ratio: ratio === null ? null : round(ratio, 3), peak_rss_mb: round(ours.rssMb) })
      rows.push([name, String(n), oursMs.toFixed(1), String(ours.iterations), ours.rssMb.toFixed(0), ours.designMb.toFixed(0), peerMs === null ? '—' : peerMs.toFixed(1), ratio === null ? '—' : ratio.toFixed(3)])
    }
    for (const pass of ['fused', 'cluster', 'ame'] as const) {
      const gb = ours.bytes[pass] / 1e9
      passRows.push([pass === 'fused' ? 'ℓ, g, H (fused)' : pass === 'cluster' ? 'cluster scores' : 'AME + Jacobian', String(n), (ours.bytes[pass] / 1e6).toFixed(0),
        ours.passes1[pass].toFixed(1), (gb / (ours.passes1[pass] / 1000)).toFixed(2), ours.passesN[pass].toFixed(1), (gb / (ours.passesN[pass] / 1000)).toFixed(2)])
    }
    if (n === 1e6) {
      // The CSV path, whole processes on both sides, on the same file.
      const cliMs = wall(process.execPath, [join(here, '..', 'scripts', 'fit.mjs'), csv, '--outcome', 'y', '--se', 'cluster:cluster', '--json'], 2)
      const pyMs = wall(PYTHON, ['-c', CSV_PEER, csv], 2)
      const ratio = cliMs / pyMs
      entries.push({ name: 'npm run fit on a CSV (whole process)', n, ours_ms: round(cliMs), peer: 'python: pandas read_csv + statsmodels probit, cluster SEs', peer_ms: round(pyMs), ratio: round(ratio, 3), peak_rss_mb: null })
      rows.push(['npm run fit on a CSV (whole process)', String(n), cliMs.toFixed(0), '—', '—', '—', pyMs.toFixed(0), ratio.toFixed(3)])
    }
  }
  printTable(['benchmark', 'n', 'ours ms', 'iter', 'peak RSS MB', 'data MB', 'statsmodels ms', 'ratio'], rows)
  console.log('\nOne pass alone (best of 3), bytes read from memory, throughput: one thread | every core')
  printTable(['pass', 'n', 'MB read', '1 thread ms', 'GB/s', 'all cores ms', 'GB/s'], passRows)
  mergeResults(entries)
}

// Helper threads of the pass pool load this file too: only the main thread runs the benchmark.
const childAt = process.argv.indexOf('--child')
if (isMainThread) {
  if (childAt >= 0) void child(Number(process.argv[childAt + 1]))
  else void main()
}
