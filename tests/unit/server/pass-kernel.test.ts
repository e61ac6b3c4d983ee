import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { assemblePassKernel, kernelModuleSource } from '../../../scripts/lib/pass-kernel-bytes.mjs'
import {
  evaluateRangeWithKernel, KERNEL_BLOCK_ROWS, KernelMemoryCache, kernelArrayBuffer, kernelMatrix, kernelRunner, prepareKernel, separationStatsWithKernel
} from '../../../server/workers/pass-kernel'
import { checkSeparation, designFromMatrix, evaluateRange, getLink, mergeSeparationStats, separationStatsLength, separationStatsRange, type LinkName } from '../../../shared/utils/stats'
import { normal, prng } from '../../../shared/utils/random/prng'

/** A design of n rows and `covariates` columns plus the intercept, X in a kernel memory (as the fit worker builds it). */
function design(n: number, covariates: number, seed: number, weighted: boolean) {
  const u = prng(seed)
  const k = covariates + 1
  const X = new Float64Array(kernelArrayBuffer(n * k * 8), 0, n * k)
  const y = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    X[i * k] = 1
    let eta = -0.2
    for (let j = 1; j < k; j++) {
      // Normal, 0/1 and large-valued columns: the sums are not exact in any order.
      const v = j % 3 === 0 ? (u() < 0.3 ? 1 : 0) : j % 3 === 1 ? normal(u) : 50 + 10 * normal(u)
      X[i * k + j] = v
      eta += (j % 3 === 2 ? 0.01 : 0.4) * (j % 3 === 2 ? v - 50 : v)
    }
    y[i] = eta + normal(u) > 0 ? 1 : 0
  }
  const weights = weighted ? Float64Array.from({ length: n }, () => 0.5 + 2 * u()) : undefined
  return designFromMatrix(X, y, Array.from({ length: covariates }, (_, j) => `x${j + 1}`), { weights })
}

// The probit terms' tolerance: a few units in the last place (the largest seen: 2.7 units, 6e-16 relative).
const TOL = 1e-15
describe('the pass kernel (WebAssembly)', () => {
  it('is the assembly of its text: the bytes the server loads match pass-kernel.wat', async () => {
    const committed = readFileSync(new URL('../../../server/workers/pass-kernel-wasm.ts', import.meta.url), 'utf8')
    expect(committed).toBe(kernelModuleSource(await assemblePassKernel()))
  })

  // The same doubles as the JavaScript pass: every cell of g and H, ℓ and the count, compared with toBe (bit for bit).
  const cases: Array<[number, number, LinkName, boolean]> = [
    [1, 2 * KERNEL_BLOCK_ROWS + 3, 'probit', false],
    [1, 501, 'logit', true],
    [2, 10_001, 'probit', true],
    [3, 9_999, 'cloglog', false],
    [10, 3 * KERNEL_BLOCK_ROWS + 7, 'probit', false],
    [11, 12_345, 'logit', true]
  ]
  for (const [covariates, n, linkName, weighted] of cases) {
    it(`gives evaluateRange's sums bit for bit: k = ${covariates + 1}, ${n} rows, ${linkName}${weighted ? ', weighted' : ''}`, () => {
      const d = design(n, covariates, 17 + covariates, weighted)
      const k = d.k
      const layout = prepareKernel(d.X, k, 2)
      expect(layout).not.toBeNull()
      const link = getLink(linkName)
      const b = Float64Array.from({ length: k }, (_, j) => (j === 0 ? -0.1 : 0.05 * ((j % 4) - 1.5)))
      // Two ranges, on two runners (threads 0 and 1 share the memory), the second starting mid-block.
      for (const [start, end, thread] of [[0, n, 0], [4 * 37, n - 5, 1]] as const) {
        const gJs = new Float64Array(k)
        const hJs = new Float64Array(k * k)
        const js = evaluateRange(d, link, b, start, end, gJs, hJs)
        const g = new Float64Array(k)
        const H = new Float64Array(k * k)
        const wasm = evaluateRangeWithKernel(d, link, b, start, end, kernelRunner(layout!, thread), g, H, true)
        expect(wasm).toEqual(js)
        expect(Array.from(g)).toEqual(Array.from(gJs))
        expect(Array.from(H)).toEqual(Array.from(hJs))
        // The lower triangle is filled (the upper one is the caller's to mirror).
        expect(H[(k - 1) * k]).not.toBe(0)
      }
    })
  }

  it('forms the probit link\'s terms as the link does, to a few units in the last place, for every η and outcome', () => {
    // η_i = x_i (b = [0, 1]) over a grid that crosses 0 and the kernel's limit |η| = 3 (past it the caller computes).
    const etas = [...Array.from({ length: 2001 }, (_, i) => -8 + (16 * i) / 2000), 0, -0, 1e-300, -1e-300, 2.9999999999, -2.9999999999, 3, -3, 0.5, -0.5]
    const n = etas.length * 2
    const X = new Float64Array(kernelArrayBuffer(n * 2 * 8), 0, n * 2)
    const y = new Float64Array(n)
    etas.forEach((eta, i) => {
      for (const outcome of [0, 1]) {
        const r = 2 * i + outcome
        X[2 * r] = 1
        X[2 * r + 1] = eta
        y[r] = outcome
      }
    })
    const weights = Float64Array.from({ length: n }, (_, i) => 0.5 + (i % 7) / 3)
    for (const weighted of [false, true]) {
      const d = designFromMatrix(X, y, ['x'], weighted ? { weights } : {})
      const run = kernelRunner(prepareKernel(d.X, 2, 1)!, 0)
      const link = getLink('probit')
      evaluateRangeWithKernel(d, link, [0, 1], 0, n, run, new Float64Array(2), new Float64Array(4))
      const t = new Float64Array(3)
      let byKernel = 0
      for (let r = 0; r < n; r++) {
        link.obsTerms(X[2 * r + 1]!, y[r]!, t)
        const wr = weighted ? weights[r]! : 1
        const close = (got: number, want: number) => expect(Math.abs(got - want)).toBeLessThanOrEqual(TOL * Math.abs(want) + 1e-300)
        close(run.s[r]!, wr * t[1]!)
        close(run.h[r]!, wr * t[2]!)
        if (!Number.isNaN(run.l[r]!)) {
          byKernel++
          close(run.l[r]!, t[0]!)
        }
        else expect(Math.abs(X[2 * r + 1]!) >= 3 || r === n - 1).toBe(true)
      }
      // The kernel did the rows within its limit (every one but |η| ≥ 3).
      expect(byKernel).toBe(2 * etas.filter(e => Math.abs(e) < 3).length)
    }
  })

  it('gives on probit the JavaScript pass\'s sums to rounding (1e-13)', () => {
    const d = design(20_003, 10, 41, true)
    const link = getLink('probit')
    const b = Float64Array.from({ length: d.k }, (_, j) => (j === 0 ? -0.2 : 0.03 * ((j % 5) - 2)))
    const gJs = new Float64Array(d.k)
    const hJs = new Float64Array(d.k * d.k)
    const [llJs, perfectJs] = evaluateRange(d, link, b, 0, d.n, gJs, hJs)
    const g = new Float64Array(d.k)
    const H = new Float64Array(d.k * d.k)
    const [ll, perfect] = evaluateRangeWithKernel(d, link, b, 0, d.n, kernelRunner(prepareKernel(d.X, d.k, 1)!, 0), g, H)
    expect(Math.abs(ll - llJs)).toBeLessThan(1e-13 * Math.abs(llJs))
    expect(perfect).toBe(perfectJs)
    const scale = Math.max(...hJs.map(Math.abs))
    g.forEach((v, j) => expect(Math.abs(v - gJs[j]!)).toBeLessThan(1e-13 * Math.max(1, Math.abs(gJs[j]!))))
    H.forEach((v, j) => expect(Math.abs(v - hJs[j]!)).toBeLessThan(1e-13 * scale))
  })

  it('takes every s-th row in place as the subsample\'s copy gives it (the starting values\' fit on the pool)', () => {
    const d = design(30_011, 6, 53, true)
    const link = getLink('probit')
    const b = Float64Array.from({ length: d.k }, (_, j) => (j === 0 ? 0.1 : -0.04 * j))
    const run = kernelRunner(prepareKernel(d.X, d.k, 1)!, 0)
    for (const [step, start, end] of [[7, 0, 30_011], [20, 1_001, 29_000], [3, 4, 400]] as const) {
      // The rows the pass should take: multiples of step in [start, end), copied into a design of their own.
      const rows = Array.from({ length: d.n }, (_, i) => i).filter(i => i % step === 0 && i >= start && i < end)
      const copy = designFromMatrix(Float64Array.from(rows.flatMap(i => Array.from(d.X.subarray(i * d.k, (i + 1) * d.k)))),
        Float64Array.from(rows, i => d.y[i]!), Array.from({ length: 6 }, (_, j) => `x${j + 1}`), { weights: Float64Array.from(rows, i => d.w![i]!) })
      const gJs = new Float64Array(d.k)
      const hJs = new Float64Array(d.k * d.k)
      const [llJs] = evaluateRange(copy, link, b, 0, copy.n, gJs, hJs)
      const g = new Float64Array(d.k)
      const H = new Float64Array(d.k * d.k)
      const [ll] = evaluateRangeWithKernel(d, link, b, start, end, run, g, H, false, step)
      expect(Math.abs(ll - llJs)).toBeLessThanOrEqual(1e-13 * Math.abs(llJs))
      g.forEach((v, j) => expect(Math.abs(v - gJs[j]!)).toBeLessThanOrEqual(1e-13 * Math.max(1, Math.abs(gJs[j]!))))
      H.forEach((v, j) => expect(Math.abs(v - hJs[j]!)).toBeLessThanOrEqual(1e-13 * Math.max(1, Math.abs(hJs[j]!))))
    }
    // A range holding no multiple of the step adds nothing.
    const g = new Float64Array(d.k)
    expect(evaluateRangeWithKernel(d, link, b, 4, 5, run, g, new Float64Array(d.k * d.k), false, 3)).toEqual([0, 0])
    expect(Array.from(g)).toEqual(Array.from(new Float64Array(d.k)))
  })

  it('reads a design built in a kernel memory in place, and copies any other', () => {
    const d = design(1000, 3, 5, false)
    expect(kernelMatrix(d.X)).toBe(d.X)
    const plain = Float64Array.from(d.X)
    const copy = kernelMatrix(plain)
    expect(copy).not.toBe(plain)
    expect(Array.from(copy)).toEqual(Array.from(plain))
    expect(prepareKernel(copy, 4, 2)).not.toBeNull()
    // Not in a kernel memory: the pool runs the JavaScript pass.
    expect(prepareKernel(plain, 4, 2)).toBeNull()
  })

  it('keeps memories from one fit for the next, the smallest large enough first, up to its limit', () => {
    const cache = new KernelMemoryCache(3 * 2 ** 20)
    const big = cache.take(2 * 2 ** 20)
    const small = cache.take(200_000)
    const other = cache.take(2 * 2 ** 20)
    expect(new Set([big, small, other]).size).toBe(3)
    cache.recycle()
    // Two of 2 MB do not fit in 3 MB: one of them and the small one are kept.
    expect(cache.keptBytes).toBeLessThanOrEqual(3 * 2 ** 20)
    expect(cache.keptBytes).toBeGreaterThan(2 * 2 ** 20)
    const again = cache.take(100_000)
    expect(again).toBe(small)
    expect([big, other]).toContain(cache.take(2 * 2 ** 20 - 100))
    // Nothing kept is large enough: a fresh memory.
    const fresh = cache.take(4 * 2 ** 20)
    expect([big, small, other]).not.toContain(fresh)
    expect(prepareKernel(new Float64Array(fresh, 0, 1000), 4, 2)).not.toBeNull()
  })

  for (const linkName of ['probit', 'logit'] as const) {
    it(`gives the same sums from a kept memory full of another fit's leftovers (NaN everywhere): ${linkName}, odd k`, () => {
      const cache = new KernelMemoryCache(2 ** 26)
      const n = 2 * KERNEL_BLOCK_ROWS + 5
      const k = 5
      const build = () => {
        const X = new Float64Array(cache.take(n * k * 8), 0, n * k)
        const u = prng(99)
        const y = new Float64Array(n)
        for (let i = 0; i < n; i++) {
          X[i * k] = 1
          for (let j = 1; j < k; j++) X[i * k + j] = normal(u)
          y[i] = X[i * k + 1]! + normal(u) > 0 ? 1 : 0
        }
        return designFromMatrix(X, y, ['a', 'b', 'c', 'd'])
      }
      const link = getLink(linkName)
      const b = Float64Array.from([0.1, -0.3, 0.2, 0.05, -0.1])
      const sums = () => {
        const d = build()
        const layout = prepareKernel(d.X, k, 2)!
        const g = new Float64Array(k)
        const H = new Float64Array(k * k)
        const value = evaluateRangeWithKernel(d, link, b, 0, n, kernelRunner(layout, 1), g, H)
        // Leftovers for the next fit: every byte of the memory, X's padding and the scratch included.
        new Float64Array(layout.memory.buffer).fill(Number.NaN)
        return { value, g: Array.from(g), H: Array.from(H), memory: layout.memory }
      }
      const first = sums()
      cache.recycle()
      const second = sums()
      expect(second.memory).toBe(first.memory)
      expect({ ...second, memory: null }).toEqual({ ...first, memory: null })
      expect(first.g.every(Number.isFinite)).toBe(true)
    })
  }

  it('declines a design whose scratch does not fit the memory\'s headroom (the pool then runs the JavaScript pass)', () => {
    // k = 800: H alone is 5.1 MB per thread, past the 4 MB of headroom.
    const X = new Float64Array(kernelArrayBuffer(900 * 800 * 8), 0, 900 * 800)
    expect(prepareKernel(X, 800, 2)).toBeNull()
    expect(prepareKernel(X, 100, 2)).not.toBeNull()
  })
})

describe('the separation check over ranges (as the pass pool runs it)', () => {
  it('merges ranges\' column statistics into those of all rows, and gives the same warnings', () => {
    const d = design(9_001, 4, 29, false)
    // Quasi-complete separation in the 0/1 column x3: every row with it has y = 1.
    for (let i = 0; i < d.n; i++) if (d.X[i * d.k + 3] === 1) d.y[i] = 1
    const whole = new Float64Array(separationStatsLength(d.k))
    separationStatsRange(d, 0, d.n, whole)
    const parts = [[0, 4000], [4000, 4004], [4004, d.n]].map(([a, b]) => {
      const out = new Float64Array(separationStatsLength(d.k) + 5)
      separationStatsRange(d, a!, b!, out)
      return out
    })
    const merged = mergeSeparationStats(parts, d.k)
    const k = d.k
    // Minima, maxima, the 0/1 flags and the count of ones exactly; the sums (counts only for 0/1 columns) to rounding.
    expect(Array.from(merged.subarray(0, 4 * k))).toEqual(Array.from(whole.subarray(0, 4 * k)))
    expect(Array.from(merged.subarray(6 * k))).toEqual(Array.from(whole.subarray(6 * k)))
    merged.subarray(4 * k, 6 * k).forEach((v, j) => expect(Math.abs(v - whole[4 * k + j]!)).toBeLessThanOrEqual(1e-12 * Math.abs(whole[4 * k + j]!)))
    expect(merged[4 * k + 3]).toBe(whole[4 * k + 3])
    const warnings = checkSeparation(d, mergeSeparationStats(parts, d.k))
    expect(warnings.map(w => w.code)).toEqual(['quasi_complete_separation'])
    expect(warnings).toEqual(checkSeparation(d))
  })

  for (const covariates of [1, 4, 9]) {
    it(`gives, by the kernel, the figures the JavaScript gives: k = ${covariates + 1}`, () => {
      const d = design(2 * KERNEL_BLOCK_ROWS + 5, covariates, 61 + covariates, false)
      const run = kernelRunner(prepareKernel(d.X, d.k, 1)!, 0)
      for (const [start, end] of [[0, d.n], [8, 4099], [100, 101]] as const) {
        const js = new Float64Array(separationStatsLength(d.k))
        separationStatsRange(d, start, end, js)
        const wasm = new Float64Array(separationStatsLength(d.k))
        separationStatsWithKernel(d, start, end, run, wasm)
        expect(Array.from(wasm)).toEqual(Array.from(js))
      }
    })
  }
})
