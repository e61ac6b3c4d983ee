/**
 * Link test (Pregibon 1980): refit the outcome on the fitted linear index η̂ = x'b̂ and its
 * square, P(y = 1) = F(a + b η̂ + c η̂²). If the model is well specified, η̂ explains the
 * outcome and η̂² adds nothing: the z test of c = 0 is the test. Uses the same link and
 * weights as the model; the SE of c is the conventional one (robust with weights).
 */
import { computeCovariance } from './covariance'
import { designFromMatrix, type Design } from './design'
import { fitBinary, type FitResult } from './fit'
import { linearPredictor } from './likelihood'
import { makeEstimate } from './summary'
import type { Estimate } from './types'

export interface LinkTestResult {
  /** Coefficient of η̂. */
  index: Estimate
  /** Coefficient of η̂²: the test. */
  indexSquared: Estimate
  reading: string
}

export function linkTest(design: Design, fit: FitResult): LinkTestResult {
  const eta = linearPredictor(design, fit.coef)
  const n = design.n
  const X = new Float64Array(n * 3)
  for (let i = 0; i < n; i++) {
    X[i * 3] = 1
    X[i * 3 + 1] = eta[i]!
    X[i * 3 + 2] = eta[i]! * eta[i]!
  }
  const aux = designFromMatrix(X, design.y, ['_hat', '_hatsq'], design.w ? { weights: design.w } : {})
  const f = fitBinary(aux, fit.link, { skipSeparationCheck: true })
  const cov = computeCovariance(aux, f, design.w ? 'hc0' : 'conventional')
  const V = cov.V
  const index = makeEstimate(f.coef[1]!, V ? V[4]! : null)
  const indexSquared = makeEstimate(f.coef[2]!, V ? V[8]! : null)
  const p = indexSquared.p
  const reading = p === null
    ? 'The link test could not be computed.'
    : p < 0.05
      ? `The squared index adds to the fit (p = ${p.toPrecision(2)}): a covariate may need a transform, a square or an interaction, or the link may be wrong.`
      : `The squared index adds nothing (p = ${p.toPrecision(2)}): no sign that the model is mis-specified.`
  return { index, indexSquared, reading }
}
