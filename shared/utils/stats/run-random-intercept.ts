/**
 * runModel for the village random intercept: rows → design → AGHQ fit → the same results
 * object as the pooled model (coefficients are β; fit statistics use the marginal
 * log-likelihood with K + 1 parameters; classification, ROC and Hosmer–Lemeshow use the
 * population-averaged probabilities; village predictions include the predicted village
 * effects) plus `randomIntercept` (σ, ρ, LR test of σ = 0, quadrature check).
 */
import { classificationTable, hosmerLemeshow, rocCurve } from './classification'
import { buildDesign } from './design'
import { EngineInputError, type EngineWarning } from './errors'
import { fitRandomIntercept } from './random-intercept'
import {
  populationAveragedMean, populationAveragedProbabilities, randomInterceptMargins, randomInterceptSummary, randomInterceptVillages
} from './random-intercept-results'
import { randomInterceptScenario } from './random-intercept-scenarios'
import { finiteOrNull, fitStatistics, makeEstimate } from './summary'
import type { CoefficientRow, ModelResults, ModelSpec, PredictedHistogram } from './types'
import type { DataInput } from './values'

/** Fewer villages than this leave σ poorly estimated (common practice). */
const FEW_VILLAGES_RI = 20
/** σ̂ below this (index scale) counts as on the boundary: the optimum is σ = 0 up to the Newton tolerance. */
const SIGMA_BOUNDARY = 1e-4

function now(): number {
  return typeof performance !== 'undefined' ? performance.now() : Date.now()
}

export function runRandomIntercept(
  data: DataInput, spec: ModelSpec, engineVersion: string, histogram: (p: Float64Array, y: Float64Array) => PredictedHistogram
): ModelResults {
  if (!spec.cluster) throw new EngineInputError('invalid_spec', 'a village random intercept needs the village column')
  if (spec.weights) throw new EngineInputError('invalid_spec', 'the village random intercept does not take sampling weights; choose the survey design for weighted data')
  const t0 = now()
  const design = buildDesign(data, spec)
  const t1 = now()
  const link = spec.link ?? 'probit'
  const fit = fitRandomIntercept(design, link, { quadPoints: spec.quadPoints, maxIterations: spec.maxIterations })
  const t2 = now()
  const k = design.k
  const K = k + 1
  const terms = design.plan.terms
  const coefficients: CoefficientRow[] = terms.map((term, j) => ({
    term: term.name, label: term.label, ...makeEstimate(fit.theta[j]!, fit.V ? fit.V[j * K + j]! : null)
  }))
  const base = fitStatistics(design, fit)
  const fitStats = {
    ...base,
    k: K,
    lrDf: K - 1,
    aic: -2 * fit.loglik + 2 * K,
    bic: -2 * fit.loglik + K * Math.log(design.n)
  }
  const p = populationAveragedProbabilities(design, fit)
  let cutoff = 0.5
  if (spec.cutoff === 'sample-rate') cutoff = design.y.reduce((a, v) => a + v, 0) / design.n
  else if (spec.cutoff !== undefined) {
    if (!(spec.cutoff > 0 && spec.cutoff < 1)) throw new EngineInputError('invalid_spec', 'cut-off must be between 0 and 1')
    cutoff = spec.cutoff
  }
  const classification = classificationTable(p, design.y, null, cutoff)
  const roc = rocCurve(p, design.y, null, spec.rocPoints ?? 101)
  const hl = hosmerLemeshow(p, design.y, null, spec.hlGroups ?? 10)
  const t3 = now()
  const marginsKind = spec.margins ?? 'ame'
  const margins = marginsKind === 'none' ? null : randomInterceptMargins(design, fit, { kind: marginsKind, at: spec.marginsAt })
  const otherKind = marginsKind === 'ame' ? 'mem' : marginsKind === 'mem' ? 'ame' : null
  const otherMargins = spec.bothMargins && otherKind ? randomInterceptMargins(design, fit, { kind: otherKind }) : null
  const t4 = now()
  const { villages, effects } = randomInterceptVillages(design, fit)
  const overall = populationAveragedMean(design, fit)
  const summary = randomInterceptSummary(design, fit, effects)
  const scenarios = (spec.scenarios ?? []).map(sc => randomInterceptScenario(design, fit, sc))
  const t5 = now()
  const warnings: EngineWarning[] = [...design.warnings, ...fit.warnings]
  if (fit.layout.G < FEW_VILLAGES_RI) {
    warnings.push({ code: 'few_villages', message: `only ${fit.layout.G} villages (${FEW_VILLAGES_RI} or more are advised): the village standard deviation σ is poorly estimated` })
  }
  if (fit.theta[k]! < SIGMA_BOUNDARY) {
    warnings.push({ code: 'sigma_on_boundary', message: `the village standard deviation σ is estimated at ${fit.theta[k]!.toPrecision(2)}, on the boundary 0: villages do not differ beyond the farm characteristics, and its standard error and ρ's are not reliable; the pooled fit tells the same` })
  }
  if (!summary.quadratureCheck.stable) {
    warnings.push({ code: 'quadrature_unstable', message: `doubling the quadrature points to ${summary.quadratureCheck.points} moves an estimate by ${summary.quadratureCheck.maxChangeInSe.toFixed(3)} standard errors: fit again with more points` })
  }
  const matrix: Array<Array<number | null>> = []
  for (let i = 0; i < k; i++) matrix.push(Array.from({ length: k }, (_, j) => (fit.V ? finiteOrNull(fit.V[i * K + j]!) : null)))
  return {
    engineVersion,
    link,
    outcome: { name: design.plan.outcome, label: design.plan.outcomeLabel },
    weights: null,
    cluster: spec.cluster,
    rows: design.rows,
    converged: fit.converged,
    iterations: fit.iterations,
    coefficients,
    covariance: { type: 'conventional', factor: 1, clusters: fit.layout.G, terms: terms.map(t => t.name), matrix },
    fit: fitStats,
    classification,
    roc,
    hosmerLemeshow: hl,
    designGof: null,
    predictedHistogram: histogram(p, design.y),
    margins,
    otherMargins,
    overall,
    villages,
    scenarios,
    warnings,
    plan: design.plan,
    timings: { designMs: t1 - t0, fitMs: t2 - t1, inferenceMs: t3 - t2, marginsMs: t4 - t3, predictionsMs: t5 - t4, totalMs: t5 - t0 },
    villageTreatment: 'random-intercept',
    randomIntercept: summary,
    survey: null
  }
}
