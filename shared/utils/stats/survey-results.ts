/**
 * What the survey design adds to the results: coefficients with t intervals and tests on
 * the design degrees of freedom (PSUs − strata), and a Wald test of all slopes,
 * F = W / q on (q, df) with W = b_s' V_ss⁻¹ b_s over the q slopes.
 */
import type { Design } from './design'
import { invertSpd } from './linalg'
import { fSf } from './distributions'
import { tQuantile, tTwoSidedP } from './student'
import type { SurveyCovariance } from './survey'
import type { CoefficientRow, Estimate, SurveyResults } from './types'

/** estimate, se, t (in the `z` field), two-sided p and 95% interval from t on df. */
export function makeEstimateT(estimate: number, variance: number | null, df: number): Estimate {
  if (variance === null || !(variance >= 0) || !Number.isFinite(variance) || !(df > 0)) {
    return { estimate, se: null, z: null, p: null, ciLow: null, ciHigh: null }
  }
  const se = Math.sqrt(variance)
  const tv = estimate / se
  const q = tQuantile(df)
  return { estimate, se, z: Number.isFinite(tv) ? tv : null, p: Number.isFinite(tv) ? tTwoSidedP(tv, df) : null, ciLow: estimate - q * se, ciHigh: estimate + q * se }
}

export function surveyCoefficientTable(design: Design, coef: Float64Array, cov: SurveyCovariance): CoefficientRow[] {
  const k = design.k
  return design.plan.terms.map((term, j) => ({
    term: term.name,
    label: term.label,
    ...makeEstimateT(coef[j]!, cov.V ? cov.V[j * k + j]! : null, cov.df)
  }))
}

export function surveySummary(
  design: Design, coef: Float64Array, cov: SurveyCovariance, columns: { strata: string | null, psu: string | null, fpc: string | null }
): SurveyResults {
  const k = design.k
  const q = k - 1
  let wald = { statistic: NaN, numDf: q, denDf: cov.df, p: NaN }
  if (cov.V && q > 0) {
    const Vs = new Float64Array(q * q)
    for (let i = 0; i < q; i++) for (let j = 0; j < q; j++) Vs[i * q + j] = cov.V[(i + 1) * k + j + 1]!
    const inv = invertSpd(Vs, q)
    if (inv) {
      let W = 0
      for (let i = 0; i < q; i++) for (let j = 0; j < q; j++) W += coef[i + 1]! * inv[i * q + j]! * coef[j + 1]!
      const F = W / q
      wald = { statistic: F, numDf: q, denDf: cov.df, p: fSf(F, q, cov.df) }
    }
  }
  return {
    strata: columns.strata,
    psu: columns.psu ?? '(each farm)',
    fpc: columns.fpc,
    strataCount: cov.strataCount,
    psuCount: cov.psuCount,
    df: cov.df,
    wald: {
      statistic: Number.isFinite(wald.statistic) ? wald.statistic : 0,
      numDf: wald.numDf,
      denDf: wald.denDf,
      p: Number.isFinite(wald.p) ? wald.p : 1
    },
    note: 'With probability weights the log-likelihood is a weighted pseudo-likelihood: the LR test, AIC, BIC and McFadden R² depend on the scale of the weights and are not valid for this design. Use the design-based Wald test; the "z" column holds t on the design degrees of freedom.'
  }
}
