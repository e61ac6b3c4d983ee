/**
 * Random-intercept benchmark: village random-intercept probit, n = 10⁵ rows, 10 covariates,
 * 500 villages, 12 adaptive quadrature points, against R's lme4::glmer(nAGQ = 12) on the
 * same data (written to bench/tmp/ as CSV) in the same run. Target: ours ≤ 0.25 × glmer.
 * glmer is timed inside R (CSV loading excluded) with its default control; our side
 * excludes data generation and design construction. Best of 2 runs on our side, 1 for glmer.
 * Run: npx tsx bench/random-intercept.bench.ts
 */
import { spawnSync } from 'node:child_process'
import { closeSync, mkdirSync, openSync, writeFileSync, writeSync } from 'node:fs'
import { dirname, join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { designFromMatrix, fitRandomIntercept } from '../shared/utils/stats/index'
import { mergeResults, printTable, round } from './lib/results-file'
import { normal, prng } from '../shared/utils/random/prng'

const here = dirname(fileURLToPath(import.meta.url))
const tmpDir = join(here, 'tmp')
const N = 1e5
const K = 10
const VILLAGES = 500
const POINTS = 12
const TARGET = 0.25

function round6(v: number): number {
  return Math.round(v * 1e6) / 1e6
}

function generate(): { X: Float64Array, y: Float64Array, cluster: Int32Array } {
  const u = prng(20261202)
  const k = K + 1
  const X = new Float64Array(N * k)
  const y = new Float64Array(N)
  const cluster = new Int32Array(N)
  const effect = Array.from({ length: VILLAGES }, () => 0.6 * normal(u))
  const beta = [-0.3, 0.5, -0.4, 0.3, -0.2, 0.25, 0.1, -0.15, 0.2, -0.1, 0.05]
  for (let i = 0; i < N; i++) {
    const g = Math.floor(u() * VILLAGES)
    cluster[i] = g
    X[i * k] = 1
    let eta = beta[0]!
    for (let j = 1; j <= K; j++) {
      const v = j <= 6 ? round6(normal(u)) : j <= 8 ? round6(-Math.log(1 - u())) : (u() < 0.4 ? 1 : 0)
      X[i * k + j] = v
      eta += beta[j]! * v
    }
    y[i] = eta + effect[g]! + normal(u) > 0 ? 1 : 0
  }
  return { X, y, cluster }
}

function writeCsv(path: string, X: Float64Array, y: Float64Array, cluster: Int32Array): void {
  const k = K + 1
  const fd = openSync(path, 'w')
  writeSync(fd, `y,village,${Array.from({ length: K }, (_, j) => `x${j + 1}`).join(',')}\n`)
  const lines: string[] = []
  for (let i = 0; i < N; i++) {
    let line = `${y[i]},v${cluster[i]}`
    for (let j = 1; j < k; j++) line += `,${X[i * k + j]}`
    lines.push(line)
    if (lines.length === 20000 || i === N - 1) {
      writeSync(fd, `${lines.join('\n')}\n`)
      lines.length = 0
    }
  }
  closeSync(fd)
}

const R_SCRIPT = `
suppressPackageStartupMessages({ library(lme4); library(jsonlite) })
a <- commandArgs(trailingOnly = TRUE)
d <- read.csv(a[1]); d$village <- factor(d$village)
f <- as.formula(paste("y ~", paste(paste0("x", 1:${K}), collapse = " + "), "+ (1 | village)"))
t0 <- proc.time()[["elapsed"]]
m <- glmer(f, data = d, family = binomial(link = "probit"), nAGQ = ${POINTS})
s <- proc.time()[["elapsed"]] - t0
cat(toJSON(list(ms = 1000 * s, beta = unname(fixef(m)), sigma = unname(getME(m, "theta")), loglik = as.numeric(logLik(m)),
  version = as.character(packageVersion("lme4"))), digits = NA, auto_unbox = TRUE), "\\n")
`

function main(): void {
  mkdirSync(tmpDir, { recursive: true })
  const { X, y, cluster } = generate()
  const csv = join(tmpDir, 'random-intercept-1e5.csv')
  writeCsv(csv, X, y, cluster)
  const design = designFromMatrix(X, y, Array.from({ length: K }, (_, j) => `x${j + 1}`), { cluster })
  let oursMs = Infinity
  let fit = null as ReturnType<typeof fitRandomIntercept> | null
  for (let r = 0; r < 2; r++) {
    const t0 = performance.now()
    fit = fitRandomIntercept(design, 'probit', { quadPoints: POINTS })
    oursMs = Math.min(oursMs, performance.now() - t0)
  }
  const script = join(tmpDir, 'glmer_bench.R')
  writeFileSync(script, R_SCRIPT)
  const r = spawnSync('Rscript', [script, csv], { encoding: 'utf8', maxBuffer: 1 << 24 })
  let peer: { ms: number, beta: number[], sigma: number, loglik: number, version: string } | null = null
  if (r.status === 0) peer = JSON.parse(r.stdout.trim().split('\n').pop()!)
  else console.log(`glmer not available (${(r.stderr || String(r.error)).trim().split('\n').pop()}); reporting our timing only`)
  if (peer && fit) {
    const k = K + 1
    const d = Math.max(...peer.beta.map((b, j) => Math.abs(b - fit!.theta[j]!)), Math.abs(peer.sigma - fit.theta[k]!))
    console.log(`largest absolute difference from glmer (β, σ): ${d.toExponential(2)}; log-likelihood ours ${fit.loglik.toFixed(6)}, glmer ${peer.loglik.toFixed(6)}`)
  }
  const ratio = peer ? oursMs / peer.ms : null
  const name = `random-intercept probit (${POINTS} points, ${VILLAGES} villages, k=${K})`
  printTable(['benchmark', 'n', 'ours ms', 'iter', 'glmer ms', 'ratio', 'target'], [[
    name, String(N), oursMs.toFixed(0), String((fit?.iterations.length ?? 1) - 1), peer ? peer.ms.toFixed(0) : '—', ratio === null ? '—' : ratio.toFixed(3), `≤ ${TARGET}`
  ]])
  mergeResults([{
    name, n: N, ours_ms: round(oursMs), peer: peer ? `lme4 ${peer.version} glmer(nAGQ = ${POINTS})` : 'lme4 glmer', peer_ms: peer ? round(peer.ms) : null,
    ratio: ratio === null ? null : round(ratio, 3), peak_rss_mb: round(process.resourceUsage().maxRSS / 1024)
  }])
  if (ratio !== null && ratio > TARGET) console.log(`random-intercept ratio ${ratio.toFixed(3)} is above the target ${TARGET}`)
}

main()
