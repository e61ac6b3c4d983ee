/**
 * Coefficient table and goodness-of-fit statistics for a fitted model.
 */
import type { Covariance } from './covariance'
import type { Design } from './design'
import { chiSquareSf, fSf, twoSidedP, Z975 } from './distributions'
import type { FitResult } from './fit'
import { choleskyInPlace, choleskySolve } from './linalg'
import type { CoefficientRow, Estimate, FitStatistics, WaldTest } from './types'

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
  if (w) {
    return {
      n, k, weightSum, loglik: ll, loglikNull: ll0,
      lrChi2: null, lrDf: k - 1, lrP: null, mcfaddenR2: null, aic: null, bic: null,
      notAvailable: 'With sampling weights the likelihood-ratio test, pseudo-R², AIC, BIC and the Hosmer–Lemeshow test are not available: they change with the scale of the weights. Use the Wald test of all slopes, and the design-adjusted test of predicted against observed (Archer–Lemeshow).',
      wald: null
    }
  }
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
    bic: -2 * ll + k * Math.log(n),
    notAvailable: null,
    wald: null
  }
}

/**
 * Wald test that every slope (all coefficients but the intercept) is 0: W = b_s' V_ss^{-1} b_s with V the model's
 * covariance. With cluster SEs the design has G − 1 degrees of freedom and the test is F = W/q on (q, G − 1); with
 * weights and no clusters each row is its own sampling unit (q, n − 1); otherwise χ²(q). Unchanged by the scale
 * of the weights, as coefficients and robust covariances are.
 */
export function waldAllSlopes(fit: FitResult, cov: Covariance, n: number, weighted: boolean): WaldTest | null {
  const k = fit.coef.length
  const q = k - 1
  if (!cov.V || q < 1) return null
  const A = new Float64Array(q * q)
  for (let i = 0; i < q; i++) for (let j = 0; j < q; j++) A[i * q + j] = cov.V[(i + 1) * k + (j + 1)]!
  const L = Float64Array.from(A)
  if (!choleskyInPlace(L, q)) return null
  const b = fit.coef.slice(1)
  const x = choleskySolve(L, q, b)
  let W = 0
  for (let i = 0; i < q; i++) W += b[i]! * x[i]!
  // Design df: clusters − 1 with cluster SEs, PSUs − strata with a survey design.
  const surveyDf = (cov as Covariance & { df?: number }).df
  const df2 = cov.type === 'survey' && surveyDf !== undefined
    ? surveyDf
    : cov.type === 'cluster' && cov.clusters ? cov.clusters - 1 : weighted && cov.type !== 'conventional' ? n - 1 : null
  if (df2 !== null && df2 > 0) return { statistic: W / q, df: q, df2, p: fSf(W / q, q, df2), kind: 'F' }
  return { statistic: W, df: q, df2: null, p: chiSquareSf(W, q), kind: 'chi2' }
}
