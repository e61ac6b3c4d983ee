/**
 * The fused data pass: log-likelihood, score and observed Hessian in ONE sweep over the rows (a block of rows at a
 * time: the link's terms, then the sums, while the block is still in cache).
 *
 * ℓ(b) = Σ_i w_i [ y_i log F(x_i'b) + (1 − y_i) log(1 − F(x_i'b)) ]
 * g(b) = Σ_i w_i ℓ'_i x_i,              ℓ'_i = dℓ_i/dη at η = x_i'b
 * H(b) = Σ_i w_i ℓ''_i x_i x_i'         (observed, not expected, information: −H)
 *
 * Why hand-written: for k ≈ 10 the Hessian update is 55–66 multiply-adds per row; a
 * general matrix library would need an n×k weighted copy of X and a BLAS-style product
 * per iteration, i.e. more memory traffic and allocation than this single loop. Four rows
 * are processed per step so that each Hessian cell is loaded and stored a quarter as often.
 */
import type { Design } from './design'
import type { Link } from './links'

export interface PassResult {
  loglik: number
  /** Score, length k. */
  gradient: Float64Array
  /** Hessian of ℓ (negative definite at a maximum), row-major k×k, full. */
  hessian: Float64Array
  /** Rows whose observed outcome is predicted with probability > 1 − 1e-10. */
  perfectlyPredicted: number
}

/** Linear index x_i'b for every row. */
export function linearPredictor(design: Design, b: ArrayLike<number>): Float64Array {
  const { n, k, X } = design
  const eta = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    const off = i * k
    let s = 0
    for (let j = 0; j < k; j++) s += X[off + j]! * b[j]!
    eta[i] = s
  }
  return eta
}

/** Log-likelihood only (used while halving steps is not worth a full pass; kept for tests). */
export function logLikelihood(design: Design, link: Link, b: ArrayLike<number>): number {
  const { n, k, X, y, w } = design
  const t = new Float64Array(3)
  let ll = 0
  for (let i = 0; i < n; i++) {
    const off = i * k
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[off + j]! * b[j]!
    link.obsTerms(eta, y[i]!, t)
    ll += w ? w[i]! * t[0]! : t[0]!
  }
  return ll
}

/** Rows whose link terms `evaluateRange` forms before summing them (a multiple of 4, the passes' stride). */
const LINK_BLOCK_ROWS = 4096

/**
 * The fused pass over rows [start, end): adds to g and the lower triangle of H, returns
 * [ℓ, rows predicted perfectly] of the range. Ranges can run on separate threads and be summed.
 * A block of rows at a time: the link's terms (`linkTermsRange`), then the sums (`accumulateSums`), which is also how
 * the pass pool's WebAssembly kernel runs it, in the same order of additions.
 */
export function evaluateRange(design: Design, link: Link, b: ArrayLike<number>, start: number, end: number, g: Float64Array, H: Float64Array): [number, number] {
  const bb = Float64Array.from(b as ArrayLike<number>)
  const rows = Math.min(LINK_BLOCK_ROWS, Math.max(0, end - start))
  const s = new Float64Array(rows)
  const h = new Float64Array(rows)
  const acc = new Float64Array(2)
  for (let a = start; a < end; a += LINK_BLOCK_ROWS) {
    const e = Math.min(end, a + LINK_BLOCK_ROWS)
    linkTermsRange(design, link, bb, a, e, s, h, acc)
    accumulateSums(design, a, e, s, h, g, H)
  }
  return [acc[0]!, acc[1]!]
}

/**
 * The sums of the fused pass over rows [start, end), from the rows' weighted dℓ/dη and d²ℓ/dη² in s and h (indexed
 * from `start`): g += Σ s_i x_i and the lower triangle of H += Σ h_i x_i x_i'. Four rows per step: each Hessian cell is
 * loaded and stored once per four rows (for k ≈ 10, 55–66 multiply-adds per row; a general matrix library would need
 * an n×k weighted copy of X per iteration). server/workers/pass-kernel.wat does the same in WebAssembly.
 */
export function accumulateSums(design: Design, start: number, end: number, s: Float64Array, h: Float64Array, g: Float64Array, H: Float64Array): void {
  const { k, X } = design
  let i = start
  for (; i + 3 < end; i += 4) {
    const o1 = i * k
    const o2 = o1 + k
    const o3 = o2 + k
    const o4 = o3 + k
    const r = i - start
    const s1 = s[r]!
    const s2 = s[r + 1]!
    const s3 = s[r + 2]!
    const s4 = s[r + 3]!
    const h1 = h[r]!
    const h2 = h[r + 1]!
    const h3 = h[r + 2]!
    const h4 = h[r + 3]!
    for (let j = 0; j < k; j++) {
      const x1 = X[o1 + j]!
      const x2 = X[o2 + j]!
      const x3 = X[o3 + j]!
      const x4 = X[o4 + j]!
      g[j]! += s1 * x1 + s2 * x2 + s3 * x3 + s4 * x4
      const a1 = h1 * x1
      const a2 = h2 * x2
      const a3 = h3 * x3
      const a4 = h4 * x4
      const base = j * k
      for (let m = 0; m <= j; m++) {
        H[base + m]! += a1 * X[o1 + m]! + a2 * X[o2 + m]! + a3 * X[o3 + m]! + a4 * X[o4 + m]!
      }
    }
  }
  for (; i < end; i++) {
    const o1 = i * k
    const s1 = s[i - start]!
    const h1 = h[i - start]!
    for (let j = 0; j < k; j++) {
      const x1 = X[o1 + j]!
      g[j]! += s1 * x1
      const a1 = h1 * x1
      const base = j * k
      for (let m = 0; m <= j; m++) H[base + m]! += a1 * X[o1 + m]!
    }
  }
}

/**
 * The link's share of the fused pass over rows [start, end): writes each row's weighted dℓ/dη and d²ℓ/dη² into
 * s[i − start] and h[i − start], and adds ℓ and the perfectly predicted rows to acc[0] and acc[1]. The score and
 * Hessian sums are then formed from s and h by the pass pool's WebAssembly kernel (server/workers/pass-kernel.wat).
 * Four rows per step (ℓ added in the same groups of four whichever block a row is in, when blocks start at multiples
 * of 4 from the range's start).
 */
export function linkTermsRange(design: Design, link: Link, b: ArrayLike<number>, start: number, end: number, s: Float64Array, h: Float64Array, acc: Float64Array): void {
  const { k, X, y, w } = design
  const t = new Float64Array(3)
  let ll = acc[0]!
  let perfect = acc[1]!
  let i = start
  for (; i + 3 < end; i += 4) {
    const o1 = i * k
    const o2 = o1 + k
    const o3 = o2 + k
    const o4 = o3 + k
    let e1 = 0
    let e2 = 0
    let e3 = 0
    let e4 = 0
    for (let j = 0; j < k; j++) {
      const bj = b[j]!
      e1 += X[o1 + j]! * bj
      e2 += X[o2 + j]! * bj
      e3 += X[o3 + j]! * bj
      e4 += X[o4 + j]! * bj
    }
    const r = i - start
    const w1 = w ? w[i]! : 1
    const w2 = w ? w[i + 1]! : 1
    const w3 = w ? w[i + 2]! : 1
    const w4 = w ? w[i + 3]! : 1
    link.obsTerms(e1, y[i]!, t)
    const l1 = t[0]!
    s[r] = w1 * t[1]!
    h[r] = w1 * t[2]!
    link.obsTerms(e2, y[i + 1]!, t)
    const l2 = t[0]!
    s[r + 1] = w2 * t[1]!
    h[r + 1] = w2 * t[2]!
    link.obsTerms(e3, y[i + 2]!, t)
    const l3 = t[0]!
    s[r + 2] = w3 * t[1]!
    h[r + 2] = w3 * t[2]!
    link.obsTerms(e4, y[i + 3]!, t)
    const l4 = t[0]!
    s[r + 3] = w4 * t[1]!
    h[r + 3] = w4 * t[2]!
    ll += w1 * l1 + w2 * l2 + w3 * l3 + w4 * l4
    if (l1 > -1e-10) perfect++
    if (l2 > -1e-10) perfect++
    if (l3 > -1e-10) perfect++
    if (l4 > -1e-10) perfect++
  }
  for (; i < end; i++) {
    const o1 = i * k
    let e1 = 0
    for (let j = 0; j < k; j++) e1 += X[o1 + j]! * b[j]!
    link.obsTerms(e1, y[i]!, t)
    const w1 = w ? w[i]! : 1
    ll += w1 * t[0]!
    if (t[0]! > -1e-10) perfect++
    s[i - start] = w1 * t[1]!
    h[i - start] = w1 * t[2]!
  }
  acc[0] = ll
  acc[1] = perfect
}

/**
 * The same pass on shifted columns x̃_j = x_j − c_j (c_0 = 0), with b̃ in the shifted coordinates
 * (x'b = x̃'b̃). Used when a column's level dwarfs its spread (a date coded yyyymmdd): the Hessian
 * of the shifted problem is well conditioned, the uncentred one is not. One row at a time: rare.
 */
export function evaluateRangeShifted(design: Design, link: Link, bt: ArrayLike<number>, shift: Float64Array, start: number, end: number, g: Float64Array, H: Float64Array): [number, number] {
  const { k, X, y, w } = design
  const t = new Float64Array(3)
  const xt = new Float64Array(k)
  let ll = 0
  let perfect = 0
  for (let i = start; i < end; i++) {
    const off = i * k
    let eta = 0
    for (let j = 0; j < k; j++) {
      xt[j] = X[off + j]! - shift[j]!
      eta += xt[j]! * bt[j]!
    }
    link.obsTerms(eta, y[i]!, t)
    const wi = w ? w[i]! : 1
    ll += wi * t[0]!
    if (t[0]! > -1e-10) perfect++
    const s1 = wi * t[1]!
    const h1 = wi * t[2]!
    for (let j = 0; j < k; j++) {
      g[j]! += s1 * xt[j]!
      const a1 = h1 * xt[j]!
      const base = j * k
      for (let m = 0; m <= j; m++) H[base + m]! += a1 * xt[m]!
    }
  }
  return [ll, perfect]
}

/** Fills the upper triangle of H from the lower one. */
export function symmetrise(H: Float64Array, k: number): void {
  for (let j = 0; j < k; j++) for (let m = 0; m < j; m++) H[m * k + j] = H[j * k + m]!
}

/**
 * One fused pass: ℓ, g and H at b. With `shift`, b, g and H are in the shifted coordinates
 * (see `evaluateRangeShifted`).
 */
export function evaluate(design: Design, link: Link, b: ArrayLike<number>, shift: Float64Array | null = null): PassResult {
  const k = design.k
  const g = new Float64Array(k)
  const H = new Float64Array(k * k)
  const [ll, perfect] = shift
    ? evaluateRangeShifted(design, link, b, shift, 0, design.n, g, H)
    : evaluateRange(design, link, b, 0, design.n, g, H)
  symmetrise(H, k)
  return { loglik: ll, gradient: g, hessian: H, perfectlyPredicted: perfect }
}

/** Per-row score factors ℓ'_i (without weights or x): the "generalised residuals". */
export function scoreFactors(design: Design, link: Link, b: ArrayLike<number>): Float64Array {
  const { n, k, X, y } = design
  const t = new Float64Array(3)
  const s = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    const off = i * k
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[off + j]! * b[j]!
    link.obsTerms(eta, y[i]!, t)
    s[i] = t[1]!
  }
  return s
}
