/**
 * Public types of the estimation engine: what a model specification looks like and the
 * plain, JSON-serialisable results object that `runModel` returns.
 *
 * Results contain only plain numbers, strings, booleans, arrays and objects (no typed
 * arrays, no Map, no undefined values in arrays). A quantity that cannot be computed is
 * `null` rather than NaN, so JSON.stringify/parse round-trips the object unchanged.
 */
import type { EngineWarning } from './errors'
import type { DesignPlan } from './design'
import type { LinkName } from './links'

export type CovariateType = 'numeric' | 'yesno' | 'categorical'

/** One explanatory variable as the coordinator chose it. */
export interface CovariateSpec {
  /** Column name in the data. */
  name: string
  /** Display label, e.g. 'distance to agro-dealer (km)'. Defaults to `name`. */
  label?: string
  /** Default 'numeric'. */
  type?: CovariateType
  /** Numeric only: use log(x) (x must be > 0) or x − mean(x) (mean over the rows used). */
  transform?: 'log' | 'centre'
  /** Numeric only: also include the square of the (transformed) value. */
  square?: boolean
  /** Categorical only: reference level. Default: the first level (see `levels`). */
  reference?: string
  /** Categorical only: level order. Default: the levels found, sorted. */
  levels?: string[]
  /**
   * Read by the data loader only (the engine ignores it): a question asked under a condition, and what the farms not
   * asked get: 'zero' (0, no, or the choice's own "(not asked)" level) or 'asked-only' (left out, like missing).
   */
  notAsked?: 'zero' | 'asked-only'
}

export type CovarianceType = 'conventional' | 'hc0' | 'hc1' | 'cluster' | 'survey'

export type MarginsKind = 'ame' | 'mem' | 'at'

/** A counterfactual: set a covariate to a value, or shift it, for everyone or some villages. */
export interface ScenarioSpec {
  name: string
  covariate: string
  /** Set the covariate to this value (number, 0/1 or yes/no, or a categorical level). */
  set?: number | string
  /** Numeric covariates only: add this amount to the raw value. */
  shift?: number
  /** Apply only to rows in these villages (cluster labels). Default: all rows. */
  villages?: string[]
}

export interface ModelSpec {
  outcome: string
  outcomeLabel?: string
  covariates: CovariateSpec[]
  /** Two-way interactions, by covariate name. */
  interactions?: Array<[string, string]>
  /** Default 'probit'. */
  link?: LinkName
  /** Sampling (probability) weights column. */
  weights?: string
  /** How the weights are named in messages (the column's name when absent). */
  weightsLabel?: string
  /** Cluster id column (the village). */
  cluster?: string
  /** Covariance for the summary and the margins. Default 'cluster' when `cluster` is set, else 'conventional'. */
  se?: CovarianceType
  /** Default 'ame'. 'at' needs `marginsAt`. 'none' skips margins. */
  margins?: MarginsKind | 'none'
  /** Also compute the other of AME / MEM (as `otherMargins`), so a reader can switch without a refit. */
  bothMargins?: boolean
  /** Covariate values for margins 'at'; unspecified covariates are held at their means. */
  marginsAt?: Record<string, number | string>
  /** Classification cut-off; default 0.5. 'sample-rate' uses the (weighted) share of ones. */
  cutoff?: number | 'sample-rate'
  /** Hosmer–Lemeshow groups; default 10. */
  hlGroups?: number
  scenarios?: ScenarioSpec[]
  maxIterations?: number
  /** Maximum number of ROC points kept in the results (AUC always uses all rows). Default 101. */
  rocPoints?: number
  /**
   * How villages (the `cluster` column) enter the model. 'cluster' (default): pooled fit with
   * cluster-robust SEs; 'random-intercept': a village random intercept by adaptive quadrature;
   * 'survey': design-based (linearisation) SEs with `cluster` as the primary sampling unit,
   * optional `strata` and `fpc`, and `weights` as probability weights.
   */
  villageTreatment?: VillageTreatment
  /** Random intercept: Gauss–Hermite points per village (default 12). */
  quadPoints?: number
  /** Survey design: stratum column. */
  strata?: string
  /** Survey design: finite-population correction column (PSUs in the stratum, or a sampling fraction < 1). */
  fpc?: string
  /** Several rounds: the round column, added as round effects (a categorical covariate). */
  rounds?: string
  /**
   * Farm id for farms seen in several rounds: with `rounds`, the adoption transitions;
   * with villageTreatment 'random-intercept', a FARM random intercept with the farm means
   * of the time-varying covariates (correlated random effects).
   */
  panelId?: string
  /** Model checks to run with the fit. */
  checks?: { linkTest?: boolean, hetero?: string[] }
}

export interface RoundTransition {
  from: string
  to: string
  farmsInBoth: number
  stayedNon: number
  adopted: number
  disAdopted: number
  stayedAdopter: number
  /** adopted / (adopted + stayedNon); null when no non-adopter was seen in both. */
  adoptionRate: number | null
  /** disAdopted / (disAdopted + stayedAdopter). */
  disAdoptionRate: number | null
}

export interface RoundsResults {
  column: string | null
  panelId: string | null
  transitions: RoundTransition[]
  /** Covariates whose farm means were added (correlated random effects). */
  farmMeans: string[]
}

export interface ChecksResults {
  linkTest: { index: Estimate, indexSquared: Estimate, reading: string } | null
  hetero: {
    varianceTerms: string[]
    variance: CoefficientRow[]
    loglik: number
    probitLoglik: number
    lrTest: { statistic: number, df: number, p: number }
    converged: boolean
    reading: string
  } | null
}

export type VillageTreatment = 'cluster' | 'random-intercept' | 'survey'

/** One Newton–Raphson iteration. */
export interface IterationRecord {
  iter: number
  loglik: number
  /** Euclidean norm of the score at this iterate. */
  gradientNorm: number
  /** Step length actually taken from this iterate (1 = full Newton step; 0 = stopped here). */
  stepSize: number
}

export interface Estimate {
  estimate: number
  se: number | null
  z: number | null
  p: number | null
  ciLow: number | null
  ciHigh: number | null
}

export interface CoefficientRow extends Estimate {
  term: string
  label: string
}

export interface FitStatistics {
  n: number
  k: number
  /** Sum of weights (equals n without weights). */
  weightSum: number
  /** With sampling weights a pseudo-log-likelihood: it scales with the weights. */
  loglik: number
  loglikNull: number
  /**
   * The likelihood-based figures below are null with sampling (probability) weights: they change with the scale
   * of the weights (×100 multiplies the LR χ² by 100) and are not valid tests or criteria for a weighted sample.
   */
  lrChi2: number | null
  lrDf: number
  lrP: number | null
  mcfaddenR2: number | null
  aic: number | null
  bic: number | null
  /** Why the figures above are absent, in one sentence for the results page; null when they are given. */
  notAvailable: string | null
  /** Wald test that all slopes are 0, from the model's covariance (set by runModel; null when it is singular). */
  wald: WaldTest | null
}

/** Wald test of q linear restrictions: F = W/q on (q, df2) when df2 is finite (design df), else χ²(q). */
export interface WaldTest {
  statistic: number
  df: number
  /** Denominator df (clusters − 1 with cluster SEs; rows − 1 with other robust SEs and weights), or null for χ². */
  df2: number | null
  p: number
  kind: 'F' | 'chi2'
}

export interface ClassificationTable {
  cutoff: number
  truePositive: number
  falsePositive: number
  trueNegative: number
  falseNegative: number
  sensitivity: number | null
  specificity: number | null
  shareCorrect: number
}

export interface RocPoint {
  threshold: number
  falsePositiveRate: number
  truePositiveRate: number
}

export interface HosmerLemeshowGroup {
  group: number
  n: number
  minPredicted: number
  maxPredicted: number
  observed: number
  expected: number
  observedRate: number
  meanPredicted: number
}

export interface HosmerLemeshow {
  statistic: number
  df: number
  p: number
  groups: HosmerLemeshowGroup[]
}

export interface DesignGofGroup {
  group: number
  /** Farms in the group. */
  n: number
  /** Sum of their weights. */
  weight: number
  minPredicted: number
  maxPredicted: number
  /** Weighted means. */
  meanPredicted: number
  observedRate: number
  /** Weighted mean of y − p̂, and its design-based standard error. */
  meanResidual: number
  se: number
}

/** Archer & Lemeshow (2006) F-adjusted mean residual test, for fits with probability weights. */
export interface DesignGof {
  method: 'archer-lemeshow'
  groups: DesignGofGroup[]
  /** Wald statistic of the groups' mean residuals; null when their covariance is singular. */
  wald: number | null
  /** F-adjusted statistic; null when the design has too few degrees of freedom. */
  statistic: number | null
  numDf: number
  denDf: number
  /** Design degrees of freedom f (PSUs − strata). */
  designDf: number
  p: number | null
  reading: string
}

export interface MarginalEffect extends Estimate {
  covariate: string
  /** Human-readable, e.g. 'soil type: clay vs loam'. */
  label: string
  /** 'derivative' = dP/dx per unit of the raw covariate; 'discrete' = P(level) − P(reference). */
  kind: 'derivative' | 'discrete'
  level?: string
  reference?: string
}

export interface Margins {
  kind: MarginsKind
  covariance: CovarianceType
  at?: Record<string, number | string>
  effects: MarginalEffect[]
}

export interface VillagePrediction extends Estimate {
  village: string
  n: number
  observedRate: number
}

export interface ScenarioResult {
  name: string
  covariate: string
  description: string
  rowsChanged: number
  overall: Estimate & { baseline: number, scenario: number }
  villages: Array<Estimate & { village: string, baseline: number, scenario: number }>
}

export interface DroppedRows {
  totalRows: number
  used: number
  dropped: number
  /** Rows dropped because this variable was missing (a row is counted once, under its first missing variable in spec order). */
  byVariable: Array<{ variable: string, label: string, count: number }>
}

export interface CovarianceSummary {
  type: CovarianceType
  /** Scalar factor applied to the sandwich (1 for conventional/HC0). */
  factor: number
  clusters: number | null
  terms: string[]
  matrix: Array<Array<number | null>>
}

export interface PredictedHistogram {
  /** Bin edges on [0, 1]; bin i holds edges[i] ≤ p̂ < edges[i + 1] (the last bin includes 1). */
  edges: number[]
  adopters: number[]
  nonAdopters: number[]
}

export interface Timings {
  designMs: number
  fitMs: number
  inferenceMs: number
  marginsMs: number
  predictionsMs: number
  totalMs: number
}

export interface ModelResults {
  engineVersion: string
  link: LinkName
  outcome: { name: string, label: string }
  weights: string | null
  cluster: string | null
  rows: DroppedRows
  converged: boolean
  iterations: IterationRecord[]
  coefficients: CoefficientRow[]
  covariance: CovarianceSummary
  fit: FitStatistics
  classification: ClassificationTable
  roc: { auc: number, points: RocPoint[] }
  hosmerLemeshow: HosmerLemeshow | null
  /** With probability weights, in place of Hosmer–Lemeshow (absent in results saved before it existed). */
  designGof?: DesignGof | null
  predictedHistogram: PredictedHistogram
  margins: Margins | null
  /** With `bothMargins`: MEM when `margins` is AME, and AME when it is MEM; otherwise null. */
  otherMargins: Margins | null
  /** Mean predicted adoption over all rows used (its `village` is 'all'). */
  overall: VillagePrediction
  villages: VillagePrediction[] | null
  scenarios: ScenarioResult[]
  warnings: EngineWarning[]
  /** How raw answers become the design row: with the coefficients, enough to predict new farms anywhere. */
  plan: DesignPlan
  /** Wall-clock times; the only field that differs between two runs on the same input. */
  timings: Timings
  /** How villages entered the model (absent in results saved before this field existed: 'cluster'). */
  villageTreatment?: VillageTreatment
  /** Village random intercept only. */
  randomIntercept?: RandomInterceptResults | null
  /** Survey design only. */
  survey?: SurveyResults | null
  /** Several rounds only. */
  rounds?: RoundsResults | null
  /** Link test / heteroskedasticity test, when asked for. */
  checks?: ChecksResults | null
}

/** Predicted village effect (index scale) of the random-intercept model. */
export interface VillageEffect {
  village: string
  n: number
  /** Conditional mode of the village effect σu_j (index scale). */
  mode: number
  /** Posterior mean of σu_j (empirical Bayes). */
  mean: number
  /** Posterior SD of σu_j. */
  sd: number
}

export interface RandomInterceptResults {
  quadPoints: number
  /** SD of the village effect on the latent-index scale. */
  sigma: Estimate
  /** Latent intra-village correlation. */
  rho: Estimate
  lrTest: { statistic: number, df: 1, p: number, pooledLoglik: number, reading: string }
  quadratureCheck: { points: number, loglikChange: number, maxChangeInSe: number, maxRelativeChange: number, stable: boolean }
  villageEffects: VillageEffect[]
}

export interface SurveyResults {
  strata: string | null
  psu: string
  fpc: string | null
  strataCount: number
  psuCount: number
  /** Design degrees of freedom: PSUs − strata; intervals and tests use t (or F) on these. */
  df: number
  /** Wald test of all slopes, F form with the design df. */
  wald: { statistic: number, numDf: number, denDf: number, p: number }
  /** What likelihood-based figures mean here. */
  note: string
}
