/**
 * Coefficient table and goodness-of-fit statistics for a fitted model.
 */
import type { Covariance } from './covariance'
import type { Design } from './design'
import { chiSquareSf, twoSidedP, Z975 } from './distributions'
import type { FitResult } from './fit'
import type { CoefficientRow, Estimate, FitStatistics } from './types'

/** Turns NaN/Infinity into null so results stay JSON-safe. */
export function finiteOrNull(x: number): number | null {
  return Number.isFinite(x) ? x : null
}

/** estimate, se, z = estimate/se, two-sided normal p, 95% interval. */
export function makeEstimate(estimate: number, variance: number | null): Estimate {
  if (variance === null || !(variance >= 0) || !Number.isFinite(variance)) {
    return { estimate, se: null, z: null, p: null, ciLow: null, ciHigh: null }
  }
  const se = Math.sqrt(variance)
  const z = estimate / se
  return {
    estimate,
    se,
    z: finiteOrNull(z),
    p: Number.isFinite(z) ? twoSidedP(z) : null,
    ciLow: estimate - Z975 * se,
    ciHigh: estimate + Z975 * se
  }
}

export function coefficientTable(design: Design, fit: FitResult, cov: Covariance): CoefficientRow[] {
  const k = design.k
  return design.plan.terms.map((term, j) => ({
    term: term.name,
    label: term.label,
    ...makeEstimate(fit.coef[j]!, cov.V ? cov.V[j * k + j]! : null)
  }))
}

/**
 * Exact intercept-only log-likelihood: n₁ ln(n₁/N) + n₀ ln(n₀/N), with weighted sums
 * W₁ = Σ w_i y_i, W₀ = Σ w_i (1 − y_i), W = W₁ + W₀ in place of counts when weighted.
 * It is the same for every link (the intercept-only fit reproduces the share of ones).
 */
export function nullLogLikelihood(y: Float64Array, w: Float64Array | null): number {
  let w1 = 0
  let w0 = 0
  for (let i = 0; i < y.length; i++) {
    const wi = w ? w[i]! : 1
    if (y[i] === 1) w1 += wi
    else w0 += wi
  }
  const W = w1 + w0
  return w1 * Math.log(w1 / W) + w0 * Math.log(w0 / W)
}

/**
 * loglik, loglikNull, LR χ² = 2(ℓ − ℓ₀) on K − 1 df, McFadden R² = 1 − ℓ/ℓ₀,
 * AIC = −2ℓ + 2K, BIC = −2ℓ + K ln N (N = rows used).
 */
export function fitStatistics(design: Design, fit: Pick<FitResult, 'loglik'>): FitStatistics {
  const { n, k, y, w } = design
  const ll0 = nullLogLikelihood(y, w)
  const ll = fit.loglik
  let weightSum = n
  if (w) {
    weightSum = 0
    for (let i = 0; i < n; i++) weightSum += w[i]!
  }
  const lr = 2 * (ll - ll0)
  return {
    n,
    k,
    weightSum,
    loglik: ll,
    loglikNull: ll0,
    lrChi2: lr,
    lrDf: k - 1,
    lrP: chiSquareSf(lr, k - 1),
    mcfaddenR2: 1 - ll / ll0,
    aic: -2 * ll + 2 * k,
    bic: -2 * ll + k * Math.log(n)
  }
}
