/**
 * rows → design → fit → summary → margins (→ village predictions and scenarios when a
 * cluster is given), returned as ONE plain JSON-serialisable object. Deterministic: the
 * same input gives the same numbers; only `timings` differ between runs.
 * Throws `EngineInputError` when the model cannot be fitted (see errors.ts).
 */
import { ascendingOrder, classificationTable, hosmerLemeshow, rocCurve } from './classification'
import { computeCovariance, type Covariance } from './covariance'
import { buildDesign, type Design, type DesignOptions } from './design'
import { EngineInputError, type EngineWarning } from './errors'
import { fitBinary } from './fit'
import type { LinkName } from './links'
import { marginalEffects } from './margins'
import type { ParallelPasses } from './parallel'
import { overallMean, predictProbabilities, scenario, villageMeans } from './predict'
import { fitHeteroProbit } from './hetero-probit'
import { linkTest } from './link-test'
import { transitionTable, withFarmMeans, withRoundEffects } from './rounds'
import { runRandomIntercept } from './run-random-intercept'
import { coefficientTable, finiteOrNull, fitStatistics, waldAllSlopes } from './summary'
import { psuLayout, readSurveyColumns, surveyCovariance, type SurveyCovariance } from './survey'
import { archerLemeshow } from './design-gof'
import { surveyCoefficientTable, surveySummary } from './survey-results'
import type { ChecksResults, CovarianceSummary, ModelResults, ModelSpec, PredictedHistogram, SurveyResults, VillageTreatment } from './types'
import type { DataInput } from './values'

export const ENGINE_VERSION = '1.1.0'

/** Clock that works in browsers, workers and Node. */
function now(): number {
  return typeof performance !== 'undefined' ? performance.now() : Date.now()
}

export function summariseCovariance(cov: Covariance, terms: string[]): CovarianceSummary {
  const k = terms.length
  const matrix: Array<Array<number | null>> = []
  for (let i = 0; i < k; i++) {
    const row: Array<number | null> = []
    for (let j = 0; j < k; j++) row.push(cov.V ? finiteOrNull(cov.V[i * k + j]!) : null)
    matrix.push(row)
  }
  return { type: cov.type, factor: cov.factor, clusters: cov.clusters, terms, matrix }
}

/**
 * The one entry point. `villageTreatment` chooses the family and the covariance:
 * 'random-intercept' → run-random-intercept.ts; 'survey' → the pooled (weighted) fit with
 * the design-based covariance of survey.ts; otherwise the pooled fit with `se`.
 */
export interface RunOptions {
  /**
   * Supplies passes split across threads for a design (see parallel.ts), or null to stay on one thread. The
   * engine is pure: threads are the host's, injected here; the single-thread path is the default.
   */
  parallel?: (design: Design, link: LinkName) => ParallelPasses | null
  /**
   * Where the design's arrays live (see DesignOptions): the host gives shared memory when it will split the passes
   * across threads, so they read the design itself instead of a copy.
   */
  arrayBuffer?: DesignOptions['arrayBuffer']
  /**
   * Called once the engine will not read `data` again: after the design is built, when no later step reads the
   * columns (no weights, checks or rounds). A host that owns the columns can let them go, so they are not held beside
   * the design for the rest of the fit (at 10^6 rows and ten covariates, 80 MB).
   */
  inputDone?: () => void
}

export function runModel(data: DataInput, spec: ModelSpec, options: RunOptions = {}): ModelResults {
  const treatment = spec.villageTreatment ?? 'cluster'
  let work: DataInput = data
  let s = spec
  let farmMeans: string[] = []
  if (spec.rounds) s = withRoundEffects(s, data, spec.rounds)
  if (spec.panelId && treatment === 'random-intercept') {
    const fm = withFarmMeans(data, s, spec.panelId)
    work = fm.data
    s = { ...fm.spec, cluster: spec.panelId }
    farmMeans = fm.meanOf
  }
  const res = treatment === 'random-intercept'
    ? runRandomIntercept(work, s, ENGINE_VERSION, predictedHistogram)
    : runPooled(work, s, treatment, { ...options, inputDone: spec.rounds || spec.panelId || spec.checks?.linkTest || spec.checks?.hetero?.length ? undefined : options.inputDone })
  res.rounds = spec.rounds || spec.panelId
    ? {
        column: spec.rounds ?? null,
        panelId: spec.panelId ?? null,
        transitions: spec.rounds && spec.panelId ? transitionTable(data, spec.outcome, spec.rounds, spec.panelId) : [],
        farmMeans
      }
    : null
  res.checks = spec.checks?.linkTest || spec.checks?.hetero?.length ? runChecks(work, s) : null
  return res
}

/** Link test and heteroskedastic probit on the pooled (unweighted or weighted) fit. */
function runChecks(data: DataInput, spec: ModelSpec): ChecksResults {
  const design = buildDesign(data, spec)
  const fit = fitBinary(design, spec.link ?? 'probit', { maxIterations: spec.maxIterations })
  const hetero = spec.checks?.hetero?.length
    ? (() => {
        if ((spec.link ?? 'probit') !== 'probit') throw new EngineInputError('invalid_spec', 'the heteroskedasticity test is for the probit link')
        const h = fitHeteroProbit(design, spec.checks!.hetero!)
        return { varianceTerms: h.varianceTerms, variance: h.variance, loglik: h.loglik, probitLoglik: h.probitLoglik, lrTest: h.lrTest, converged: h.converged, reading: h.reading }
      })()
    : null
  return { linkTest: spec.checks?.linkTest ? linkTest(design, fit) : null, hetero }
}

function runPooled(data: DataInput, spec: ModelSpec, treatment: VillageTreatment, options: RunOptions): ModelResults {
  if (treatment !== 'cluster' && treatment !== 'survey') throw new EngineInputError('invalid_spec', `unknown village treatment '${String(treatment)}'`)
  if (treatment === 'survey' && !spec.weights) throw new EngineInputError('invalid_spec', 'a survey design needs the probability weights column')
  if (treatment !== 'survey' && (spec.strata || spec.fpc)) throw new EngineInputError('invalid_spec', 'strata and fpc belong to the survey design; choose it as the village treatment')
  const t0 = now()
  const design = buildDesign(data, spec, { arrayBuffer: options.arrayBuffer })
  if (!design.w) options.inputDone?.()
  const t1 = now()
  const parallel = options.parallel?.(design, spec.link ?? 'probit') ?? null
  const fit = fitBinary(design, spec.link ?? 'probit', { maxIterations: spec.maxIterations, parallel })
  const t2 = now()
  let surveyCov: SurveyCovariance | null = null
  let survey: SurveyResults | null = null
  const seType = treatment === 'survey' ? 'survey' : spec.se ?? (spec.cluster ? 'cluster' : 'conventional')
  let cov: Covariance
  const surveyCols = design.w ? readSurveyColumns(data, design, treatment === 'survey' ? spec.strata : undefined, treatment === 'survey' ? spec.fpc : undefined) : null
  if (treatment === 'survey') {
    surveyCov = surveyCovariance(design, fit, surveyCols!)
    survey = surveySummary(design, fit.coef, surveyCov, { strata: spec.strata ?? null, psu: spec.cluster ?? null, fpc: spec.fpc ?? null })
    cov = surveyCov
  }
  else cov = computeCovariance(design, fit, seType, parallel)
  const coefficients = surveyCov ? surveyCoefficientTable(design, fit.coef, surveyCov) : coefficientTable(design, fit, cov)
  const fitStats = fitStatistics(design, fit)
  fitStats.wald = waldAllSlopes(fit, cov, design.n, design.w !== null)
  const p = predictProbabilities(design, fit)
  let cutoff = 0.5
  if (spec.cutoff === 'sample-rate') cutoff = (fitStats.weightSum > 0 ? sumWeighted(design.y, design.w) / fitStats.weightSum : 0.5)
  else if (spec.cutoff !== undefined) {
    if (!(spec.cutoff > 0 && spec.cutoff < 1)) throw new EngineInputError('invalid_spec', 'cut-off must be between 0 and 1')
    cutoff = spec.cutoff
  }
  const classification = classificationTable(p, design.y, design.w, cutoff)
  const order = ascendingOrder(p)
  const roc = rocCurve(p, design.y, design.w, spec.rocPoints ?? 101, order)
  // With sampling weights the Hosmer–Lemeshow statistic scales with the weights: not shown (see FitStatistics).
  const hl = design.w ? null : hosmerLemeshow(p, design.y, design.w, spec.hlGroups ?? 10, order)
  // In its place the design-adjusted test, with the villages (or each farm) as PSUs outside the survey design.
  const designGof = surveyCols ? archerLemeshow(design, p, psuLayout(design, surveyCols), spec.hlGroups ?? 10) : null
  const t3 = now()
  const marginsKind = spec.margins ?? 'ame'
  const margins = marginsKind === 'none' ? null : marginalEffects(design, fit, cov, { kind: marginsKind, at: spec.marginsAt, parallel })
  const otherKind = marginsKind === 'ame' ? 'mem' : marginsKind === 'mem' ? 'ame' : null
  const otherMargins = spec.bothMargins && otherKind ? marginalEffects(design, fit, cov, { kind: otherKind, parallel }) : null
  const t4 = now()
  const villages = design.cluster ? villageMeans(design, fit, cov) : null
  const overall = overallMean(design, fit, cov)
  const scenarios = (spec.scenarios ?? []).map(s => scenario(design, fit, cov, s))
  const t5 = now()

  const warnings: EngineWarning[] = [...design.warnings, ...fit.warnings]
  if (surveyCov && surveyCov.df < 30) {
    warnings.push({ code: 'few_psus', message: `only ${surveyCov.psuCount} sampled villages (primary sampling units) in ${surveyCov.strataCount} ${surveyCov.strataCount === 1 ? 'stratum' : 'strata'}, so ${surveyCov.df} design degrees of freedom: intervals are wide and tests of many terms are unreliable (30 or more are advised)` })
  }
  if (surveyCov?.singletonStrata.length) {
    const list = surveyCov.singletonStrata
    warnings.push({
      code: 'singleton_stratum',
      message: `${list.length === 1 ? `stratum ${list[0]} has` : `strata ${list.join(', ')} have`} only one sampled village: the variation within ${list.length === 1 ? 'it' : 'them'} cannot be measured, so ${list.length === 1 ? 'its village is' : 'their villages are'} compared with the whole sample instead; merging such a stratum with a neighbouring one is safer`,
      variables: list
    })
  }
  if (design.w && seType === 'conventional') {
    warnings.push({
      code: 'weights_not_likelihood',
      message: 'with sampling weights the conventional standard errors treat weights as frequencies; use robust or cluster standard errors'
    })
  }
  if (seType === 'cluster' && cov.clusters !== null && cov.clusters < 30) {
    warnings.push({ code: 'few_clusters', message: `only ${cov.clusters} clusters: cluster-robust standard errors may be too small` })
  }
  const minGroup = hl ? Math.min(...hl.groups.map(g => g.expected)) : Infinity
  if (minGroup < 5) {
    warnings.push({ code: 'small_hl_groups', message: 'some Hosmer–Lemeshow groups expect fewer than 5 adopters; the test is approximate' })
  }
  return {
    engineVersion: ENGINE_VERSION,
    link: fit.link,
    outcome: { name: design.plan.outcome, label: design.plan.outcomeLabel },
    weights: spec.weights ?? null,
    cluster: spec.cluster ?? null,
    rows: design.rows,
    converged: fit.converged,
    iterations: fit.iterations,
    coefficients,
    covariance: summariseCovariance(cov, design.plan.terms.map(t => t.name)),
    fit: fitStats,
    classification,
    roc,
    hosmerLemeshow: hl,
    designGof,
    predictedHistogram: predictedHistogram(p, design.y),
    margins,
    otherMargins,
    overall,
    villages,
    scenarios,
    warnings,
    plan: design.plan,
    timings: {
      designMs: t1 - t0,
      fitMs: t2 - t1,
      inferenceMs: t3 - t2,
      marginsMs: t4 - t3,
      predictionsMs: t5 - t4,
      totalMs: t5 - t0
    },
    villageTreatment: treatment,
    randomIntercept: null,
    survey
  }
}

/** Counts of fitted probabilities in 20 equal bins, split by outcome, for the adopters/non-adopters chart. */
export function predictedHistogram(p: Float64Array, y: Float64Array, bins = 20): PredictedHistogram {
  const adopters = Array.from({ length: bins }, () => 0)
  const nonAdopters = Array.from({ length: bins }, () => 0)
  for (let i = 0; i < p.length; i++) {
    const bin = Math.min(bins - 1, Math.floor(p[i]! * bins))
    if (y[i]! === 1) adopters[bin]! += 1
    else nonAdopters[bin]! += 1
  }
  return { edges: Array.from({ length: bins + 1 }, (_, i) => i / bins), adopters, nonAdopters }
}

function sumWeighted(y: Float64Array, w: Float64Array | null): number {
  let s = 0
  for (let i = 0; i < y.length; i++) s += (w ? w[i]! : 1) * y[i]!
  return s
}
