/**
 * Covariance of the estimates, computed after (and separately from) the fit.
 *
 * With A = −H (observed information at b̂, weighted when there are weights) and the
 * per-row scores s_i = w_i ℓ'_i x_i:
 * - conventional: V = A^{-1}
 * - hc0:          V = A^{-1} (Σ_i s_i s_i') A^{-1}
 * - hc1:          V = N/(N−K) · HC0, i.e. standard errors scaled by sqrt(N/(N−K))
 *                 (the OLS-style small-sample factor; statsmodels' discrete models return
 *                 plain HC0 under the name HC1, so their numbers differ from ours by it)
 * - cluster:      V = c · A^{-1} (Σ_g u_g u_g') A^{-1}, u_g = Σ_{i∈g} s_i,
 *                 CR1 factor c = G/(G−1) · (N−1)/(N−K)
 * N counts rows (not the sum of weights) and K the coefficients. With sampling weights
 * the sandwich uses w_i² in the meat (pweights), which is the standard design-based
 * variance; the conventional covariance then treats weights as frequencies and is not
 * a valid design-based variance (a warning says so).
 */
import type { Design } from './design'
import { EngineInputError } from './errors'
import { toShifted, type FitResult } from './fit'
import { invertSpd, sandwich } from './linalg'
import { getLink, type Link } from './links'
import type { ParallelPasses } from './parallel'
import type { CovarianceType } from './types'

export interface Covariance {
  type: CovarianceType
  /** Row-major k×k, or null when the information matrix is singular. */
  V: Float64Array | null
  factor: number
  clusters: number | null
}

export function informationInverse(fit: FitResult, k: number): Float64Array | null {
  const A = new Float64Array(k * k)
  const H = fit.hessianShifted ?? fit.hessian
  for (let i = 0; i < k * k; i++) A[i] = -H[i]!
  const V = invertSpd(A, k)
  return V && fit.shift && fit.hessianShifted ? unshiftCovariance(V, fit.shift, k) : V
}

/**
 * V = P Ṽ P' with P = M'^{-1} (b_0 = b̃_0 − Σ c_j b̃_j): a covariance from the shifted
 * coordinates back to the original columns.
 */
export function unshiftCovariance(Vt: Float64Array, c: Float64Array, k: number): Float64Array {
  // Rows first (P Ṽ), then columns ((P Ṽ) P').
  const A = Float64Array.from(Vt)
  for (let m = 0; m < k; m++) {
    let s = 0
    for (let j = 1; j < k; j++) s += c[j]! * Vt[j * k + m]!
    A[m]! -= s
  }
  const V = Float64Array.from(A)
  for (let r = 0; r < k; r++) {
    let s = 0
    for (let j = 1; j < k; j++) s += c[j]! * A[r * k + j]!
    V[r * k]! -= s
  }
  return V
}

/** Adds the score sums u_g = Σ_{i∈g} w_i ℓ'_i x̃_i of rows [start, end) to U (G×k); x̃ = x − c. */
export function clusterScoresRange(design: Design, link: Link, b: ArrayLike<number>, c: Float64Array, start: number, end: number, U: Float64Array): void {
  const { k, X, y, w } = design
  const cl = design.cluster!
  const t = new Float64Array(3)
  for (let i = start; i < end; i++) {
    const off = i * k
    let eta = 0
    for (let j = 0; j < k; j++) eta += (X[off + j]! - c[j]!) * b[j]!
    link.obsTerms(eta, y[i]!, t)
    const s = (w ? w[i]! : 1) * t[1]!
    const uo = cl[i]! * k
    for (let j = 0; j < k; j++) U[uo + j]! += s * (X[off + j]! - c[j]!)
  }
}

/** Number of clusters G (labels, or the largest index + 1). */
export function clusterCount(design: Design): number {
  let G = design.clusterLabels.length
  const cl = design.cluster
  if (cl) for (let i = 0; i < design.n; i++) G = Math.max(G, cl[i]! + 1)
  return G
}

export function computeCovariance(design: Design, fit: FitResult, type: CovarianceType, parallel: ParallelPasses | null = null): Covariance {
  const { n, k, X, y, w } = design
  if (type === 'conventional') return { type, V: informationInverse(fit, k), factor: 1, clusters: null }
  // The sandwich is formed in the shifted coordinates when the fit used them (see fit.ts), then moved back.
  const c = fit.shift ?? new Float64Array(k)
  const Hs = fit.hessianShifted ?? fit.hessian
  const A = new Float64Array(k * k)
  for (let i = 0; i < k * k; i++) A[i] = -Hs[i]!
  const bread = invertSpd(A, k)
  if (type !== 'hc0' && type !== 'hc1' && type !== 'cluster') {
    throw new EngineInputError('invalid_spec', `unknown covariance type '${String(type)}'`)
  }
  if (type === 'cluster' && !design.cluster) {
    throw new EngineInputError('invalid_spec', 'cluster-robust standard errors need a cluster variable')
  }
  const link = getLink(fit.link)
  const b = fit.shift ? toShifted(fit.coef, c) : fit.coef
  const t = new Float64Array(3)
  const meat = new Float64Array(k * k)
  let G = 0
  if (type === 'cluster') {
    G = clusterCount(design)
    let U: Float64Array
    if (parallel) U = parallel.clusterScores(Float64Array.from(b), c)
    else {
      U = new Float64Array(G * k)
      clusterScoresRange(design, link, b, c, 0, n, U)
    }
    for (let g = 0; g < G; g++) {
      const uo = g * k
      for (let j = 0; j < k; j++) {
        const uj = U[uo + j]!
        if (uj === 0) continue
        for (let m = 0; m <= j; m++) meat[j * k + m]! += uj * U[uo + m]!
      }
    }
  }
  else {
    for (let i = 0; i < n; i++) {
      const off = i * k
      let eta = 0
      for (let j = 0; j < k; j++) eta += (X[off + j]! - c[j]!) * b[j]!
      link.obsTerms(eta, y[i]!, t)
      const s = (w ? w[i]! : 1) * t[1]!
      const s2 = s * s
      for (let j = 0; j < k; j++) {
        const a = s2 * (X[off + j]! - c[j]!)
        for (let m = 0; m <= j; m++) meat[j * k + m]! += a * (X[off + m]! - c[m]!)
      }
    }
  }
  for (let j = 0; j < k; j++) for (let m = 0; m < j; m++) meat[m * k + j] = meat[j * k + m]!
  let factor = 1
  if (type === 'hc1') factor = n / (n - k)
  if (type === 'cluster') factor = (G / (G - 1)) * ((n - 1) / (n - k))
  if (!bread) return { type, V: null, factor, clusters: type === 'cluster' ? G : null }
  const Vs = sandwich(bread, meat, k)
  const V = fit.shift ? unshiftCovariance(Vs, fit.shift, k) : Vs
  if (factor !== 1) for (let i = 0; i < k * k; i++) V[i]! *= factor
  return { type, V, factor, clusters: type === 'cluster' ? G : null }
}
