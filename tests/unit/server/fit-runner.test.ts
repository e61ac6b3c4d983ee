import { mkdtempSync, readFileSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { bundleFitWorker } from '../../../scripts/lib/bundle-fit-worker.mjs'
import { endFitWorkers, keptFitWorkerIds, prepareFitWorker, runFitInWorker } from '../../../server/utils/fit-runner'
import { runModel } from '../../../shared/utils/stats'

// The same esbuild bundle of the worker that the build puts beside the server.
const dir = mkdtempSync(path.join(tmpdir(), 'furrowcast-worker-'))
const options = { workerPath: path.join(dir, 'fit.worker.mjs') }
beforeAll(() => bundleFitWorker(options.workerPath))
afterAll(async () => {
  await endFitWorkers()
  rmSync(dir, { recursive: true, force: true })
})

// Spector & Mazzeo (1980), as tabulated in Greene, Econometric Analysis; see tests/fixtures/reference/README.md.
function spector() {
  const lines = readFileSync(path.resolve(__dirname, '../../fixtures/reference/program-effectiveness.csv'), 'utf8').trim().split('\n').slice(1)
  return lines.map((line) => {
    const [, grade, average, testscore, participation] = line.split(',').map(f => f.replace(/"/g, ''))
    return { grade: grade === 'increase' ? 1 : 0, average: Number(average), testscore: Number(testscore), participation: participation === 'yes' ? 1 : 0 }
  })
}

const spec = {
  outcome: 'grade',
  covariates: [
    { name: 'average', type: 'numeric' as const },
    { name: 'testscore', type: 'numeric' as const },
    { name: 'participation', type: 'numeric' as const }
  ],
  link: 'probit' as const
}

describe('fits in a worker thread', () => {
  it('gives the same numbers as the engine in-process, and the published probit coefficients', async () => {
    const rows = spector()
    const reply = await runFitInWorker(rows, spec, options)
    expect(reply.ok).toBe(true)
    if (!reply.ok) return
    const local = runModel(rows, spec)
    expect(reply.results.coefficients.map(c => c.estimate)).toEqual(local.coefficients.map(c => c.estimate))
    // Reference: statsmodels 0.13.5 Probit on the same data (tests/fixtures/reference/reference-values.json).
    expect(reply.results.coefficients[0]!.estimate).toBeCloseTo(-7.452319648220317, 8)
  })

  it('returns the engine\'s named input error instead of throwing', async () => {
    const rows = spector().map(r => ({ ...r, grade: 1 }))
    const reply = await runFitInWorker(rows, spec, options)
    expect(reply.ok).toBe(false)
    if (reply.ok) return
    expect(reply.error.kind).toBe('input')
    expect(reply.error.code).toMatch(/constant/)
  })

  it('gives on both cores, with the design built in shared memory, the numbers one thread gives', async () => {
    // Above the pass pool's threshold (PARALLEL_MIN_ROWS), so the worker builds the design in SharedArrayBuffers and
    // its helper threads read it in place; the in-process run is the plain single-thread engine.
    const n = 120_000
    let seed = 11
    const random = () => (seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648
    const x1 = Float64Array.from({ length: n }, () => random() * 4 - 2)
    const x2 = Float64Array.from({ length: n }, () => random())
    const village = Array.from({ length: n }, (_, i) => `V${i % 300}`)
    const y = Float64Array.from(x1, (v, i) => (0.6 * v - 0.8 * x2[i]! + (random() - 0.5) * 3 > 0 ? 1 : 0))
    const big = { outcome: 'y', covariates: [{ name: 'x1', type: 'numeric' as const }, { name: 'x2', type: 'numeric' as const }], link: 'probit' as const, se: 'cluster' as const, cluster: 'village' }
    const reply = await runFitInWorker({ y, x1, x2, village }, big, options)
    expect(reply.ok).toBe(true)
    if (!reply.ok) return
    const local = runModel({ y, x1, x2, village }, big)
    expect(reply.results.coefficients).toHaveLength(3)
    reply.results.coefficients.forEach((c, j) => {
      expect(Math.abs(c.estimate - local.coefficients[j]!.estimate)).toBeLessThan(1e-10)
      expect(Math.abs(c.se! - local.coefficients[j]!.se!)).toBeLessThan(1e-10)
    })
    expect(reply.results.margins!.effects.map(e => e.estimate)).toEqual(local.margins!.effects.map(e => expect.closeTo(e.estimate, 10)))

    // The kept worker's next fits build their designs in the memories this one left (not cleared): the same numbers
    // as in fresh memory, to the last bit, fit after fit.
    const threadOf = keptFitWorkerIds()
    let previous: unknown = null
    const smaller = { y: y.slice(0, 100_000), x1: x1.slice(0, 100_000), x2: x2.slice(0, 100_000), village: village.slice(0, 100_000) }
    const fresh = runModel({ ...smaller }, big)
    for (let again = 0; again < 2; again++) {
      const next = await runFitInWorker({ ...smaller, y: smaller.y.slice(), x1: smaller.x1.slice(), x2: smaller.x2.slice() }, big, options)
      expect(next.ok).toBe(true)
      if (!next.ok) return
      expect(keptFitWorkerIds()).toEqual(threadOf)
      next.results.coefficients.forEach((c, j) => {
        expect(Math.abs(c.estimate - fresh.coefficients[j]!.estimate)).toBeLessThan(1e-10)
        expect(Math.abs(c.se! - fresh.coefficients[j]!.se!)).toBeLessThan(1e-10)
      })
      if (again === 1) expect(next.results.coefficients).toEqual(previous)
      previous = next.results.coefficients
    }
  }, 120_000)

  it('keeps the calling thread responsive during a large fit', async () => {
    const n = 200_000
    let seed = 7
    const random = () => (seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648
    const x = Array.from({ length: n }, () => random() * 4 - 2)
    const y = x.map(v => (v + (random() - 0.5) * 3 > 0 ? 1 : 0))
    let ticks = 0
    const timer = setInterval(() => {
      ticks += 1
    }, 5)
    const reply = await runFitInWorker({ y, x }, { outcome: 'y', covariates: [{ name: 'x', type: 'numeric' }] }, options)
    clearInterval(timer)
    expect(reply.ok).toBe(true)
    expect(ticks).toBeGreaterThan(3)
    // 200,000 rows: the worker also starts its pass helper threads; a loaded machine needs more than 5 s.
  }, 120_000)
})

describe('the kept fit worker', () => {
  function generated(n: number) {
    let seed = 3
    const random = () => (seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648
    const x = Float64Array.from({ length: n }, () => random() * 4 - 2)
    const y = Float64Array.from(x, v => (v + (random() - 0.5) * 3 > 0 ? 1 : 0))
    return { y, x }
  }
  const plain = { outcome: 'y', covariates: [{ name: 'x', type: 'numeric' as const }], link: 'probit' as const }

  it('is warmed before the first fit, serves it and the next, and gives the numbers the engine gives in-process', async () => {
    await endFitWorkers()
    await prepareFitWorker(options.workerPath)
    const [warmed] = keptFitWorkerIds()
    expect(warmed).toBeGreaterThan(0)
    const rows = spector()
    for (let i = 0; i < 2; i++) {
      const reply = await runFitInWorker(rows, spec, options)
      expect(reply.ok && reply.results.coefficients.map(c => c.estimate)).toEqual(runModel(rows, spec).coefficients.map(c => c.estimate))
      expect(keptFitWorkerIds()).toEqual([warmed])
    }
  }, 60_000)

  it('is ended after a large fit and replaced by a fresh one', async () => {
    await prepareFitWorker(options.workerPath)
    const [before] = keptFitWorkerIds()
    const data = generated(210_000)
    const reply = await runFitInWorker(data, plain, options)
    expect(reply.ok).toBe(true)
    await expect.poll(() => keptFitWorkerIds(), { timeout: 30_000 }).toHaveLength(1)
    expect(keptFitWorkerIds()[0]).not.toBe(before)
  }, 120_000)

  it('is ended when a fit runs past the timeout, and the next fit is answered by another', async () => {
    await prepareFitWorker(options.workerPath)
    const [before] = keptFitWorkerIds()
    await expect(runFitInWorker(generated(150_000), plain, { ...options, timeoutMs: 1 })).rejects.toThrow(/did not finish within 1 ms/)
    const reply = await runFitInWorker(spector(), spec, options)
    expect(reply.ok).toBe(true)
    expect(keptFitWorkerIds()).not.toContain(before)
  }, 120_000)

  it('answers two fits at once, each with its own numbers', async () => {
    const a = generated(20_000)
    const rows = spector()
    const [one, two] = await Promise.all([runFitInWorker(a, plain, options), runFitInWorker(rows, spec, options)])
    expect(one.ok && one.results.coefficients.map(c => c.estimate)).toEqual(runModel(a, plain).coefficients.map(c => c.estimate))
    expect(two.ok && two.results.coefficients.map(c => c.estimate)).toEqual(runModel(rows, spec).coefficients.map(c => c.estimate))
    expect(keptFitWorkerIds()).toHaveLength(1)
  }, 120_000)
})
