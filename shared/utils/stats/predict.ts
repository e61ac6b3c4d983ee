/**
 * Predictions: p̂ per row and for new rows, village means of p̂ with delta-method SEs,
 * and counterfactual scenarios.
 *
 * Village mean: m_g = Σ_{i∈g} w_i F(η_i) / Σ_{i∈g} w_i, ∂m_g/∂b = Σ w_i f(η_i) x_i / Σ w_i,
 * Var(m_g) = J V J'. Scenario: η_i^s is the index with the covariate set (or shifted) for
 * the rows concerned; Δ = mean over the group of F(η^s) − F(η), with Jacobian
 * mean of f(η^s) x^s − f(η) x. Rows are treated as fixed; V is the covariance passed in.
 */
import { emptyProfile, encodeRows, fillRow, readProfile, transformValue, untransformValue, type Design, type DesignPlan } from './design'
import { EngineInputError } from './errors'
import type { Covariance } from './covariance'
import type { FitResult } from './fit'
import { quadForm } from './linalg'
import { getLink, type Link, type LinkName } from './links'
import { makeEstimate } from './summary'
import type { Estimate, ScenarioResult, ScenarioSpec, VillagePrediction } from './types'
import { toLevel, toYesNo, type DataInput } from './values'

/** p̂_i = F(x_i'b) for every design row. */
export function predictProbabilities(design: Design, fit: FitResult): Float64Array {
  const { n, k, X } = design
  const link = getLink(fit.link)
  const b = fit.coef
  const p = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[i * k + j]! * b[j]!
    p[i] = link.cdf(eta)
  }
  return p
}

/** p̂ for new rows (same covariates); rows with a missing covariate get null. */
export function predictNew(plan: DesignPlan, coef: ArrayLike<number>, linkName: LinkName, data: DataInput): Array<number | null> {
  const link = getLink(linkName)
  const { X, n, rowIndex } = encodeRows(plan, data)
  const k = plan.terms.length
  const total = Array.isArray(data) ? data.length : (Object.values(data)[0]?.length ?? 0)
  const out: Array<number | null> = new Array<number | null>(total).fill(null)
  for (let r = 0; r < n; r++) {
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[r * k + j]! * coef[j]!
    out[rowIndex[r]!] = link.cdf(eta)
  }
  return out
}

function requireClusters(design: Design): Int32Array {
  if (!design.cluster) throw new EngineInputError('invalid_spec', 'village predictions need a cluster (village) variable')
  return design.cluster
}

/** Mean predicted adoption per village, with delta-method SE and 95% interval. */
export function villageMeans(design: Design, fit: FitResult, cov: Covariance): VillagePrediction[] {
  const cl = requireClusters(design)
  return groupMeans(design, fit, cov, cl, design.clusterLabels)
}

/** Mean predicted adoption over every row used, with its delta-method SE: the headline figure. */
export function overallMean(design: Design, fit: FitResult, cov: Covariance): VillagePrediction {
  return groupMeans(design, fit, cov, new Int32Array(design.n), ['all'])[0]!
}

/**
 * Weighted mean of p̂ within each group, with delta-method SE from the gradient
 * (1/Σw) Σ wᵢ f(xᵢ'b) xᵢ of the mean with respect to b.
 */
function groupMeans(design: Design, fit: FitResult, cov: Covariance, groupOf: Int32Array, labels: string[]): VillagePrediction[] {
  const { n, k, X, y, w } = design
  const link = getLink(fit.link)
  const b = fit.coef
  const G = labels.length
  const sw = new Float64Array(G)
  const sp = new Float64Array(G)
  const sy = new Float64Array(G)
  const cnt = new Int32Array(G)
  const J = new Float64Array(G * k)
  for (let i = 0; i < n; i++) {
    const off = i * k
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[off + j]! * b[j]!
    const wi = w ? w[i]! : 1
    const g = groupOf[i]!
    sw[g]! += wi
    sp[g]! += wi * link.cdf(eta)
    sy[g]! += wi * y[i]!
    cnt[g]!++
    const f = wi * link.pdf(eta)
    const go = g * k
    for (let j = 0; j < k; j++) J[go + j]! += f * X[off + j]!
  }
  const out: VillagePrediction[] = []
  for (let g = 0; g < G; g++) {
    if (cnt[g] === 0) continue
    const jg = J.subarray(g * k, (g + 1) * k).map(v => v / sw[g]!)
    out.push({
      village: labels[g]!,
      n: cnt[g]!,
      observedRate: sy[g]! / sw[g]!,
      ...makeEstimate(sp[g]! / sw[g]!, cov.V ? quadForm(cov.V, jg, k) : null)
    })
  }
  return out
}

/** Yes/no covariates are read as answers ("yes"/"no"), never as the 1/0 the design matrix holds. */
function describe(spec: ScenarioSpec, label: string, type: string): string {
  const setText = type === 'yesno' ? (['1', 'yes', 'true'].includes(String(spec.set).toLowerCase()) ? 'yes' : 'no') : String(spec.set)
  const what = spec.shift !== undefined
    ? `${label} increased by ${spec.shift}`
    : type === 'yesno' ? `“${label}” answered ${setText}` : `${label} set to ${setText}`
  return spec.villages?.length ? `${what} in ${spec.villages.length} village(s)` : `${what} for every farm`
}

/** The design rows with a scenario applied: the changed matrix, which rows changed, and the words. */
export interface ScenarioMatrix {
  /** Row-major n×k, equal to the design's X on rows the scenario leaves alone. */
  Xs: Float64Array
  changed: Uint8Array
  rowsChanged: number
  description: string
}

/** Applies a scenario (set a value or shift it, for every farm or some villages) to the design rows. */
export function scenarioMatrix(design: Design, spec: ScenarioSpec): ScenarioMatrix {
  const { n, k, X, plan } = design
  const ci = plan.covariates.findIndex(c => c.name === spec.covariate)
  if (ci < 0) throw new EngineInputError('unknown_variable', `scenario '${spec.name}': '${spec.covariate}' is not a covariate of the model`, [spec.covariate])
  const c = plan.covariates[ci]!
  if (c.dropped) throw new EngineInputError('invalid_spec', `scenario '${spec.name}': '${spec.covariate}' was dropped from the model`, [spec.covariate])
  if ((spec.set === undefined) === (spec.shift === undefined)) {
    throw new EngineInputError('invalid_spec', `scenario '${spec.name}': give exactly one of 'set' or 'shift'`)
  }
  if (spec.shift !== undefined && (c.type !== 'numeric' || !Number.isFinite(spec.shift))) {
    throw new EngineInputError('invalid_spec', `scenario '${spec.name}': only numeric covariates can be shifted, by a finite amount`, [spec.covariate])
  }
  let setSlot: Float64Array | null = null
  if (spec.set !== undefined) {
    setSlot = new Float64Array(c.type === 'categorical' ? c.nonReferenceLevels.length : 1)
    if (c.type === 'numeric') {
      const x = typeof spec.set === 'number' ? spec.set : Number(spec.set)
      if (!Number.isFinite(x)) throw new EngineInputError('invalid_value', `scenario '${spec.name}': value must be a number`, [spec.covariate])
      setSlot[0] = transformValue(c, x, -1)
    }
    else if (c.type === 'yesno') {
      const d = toYesNo(spec.set)
      if (d === null) throw new EngineInputError('invalid_value', `scenario '${spec.name}': value must be yes/no or 0/1`, [spec.covariate])
      setSlot[0] = d
    }
    else {
      const lvl = toLevel(spec.set)
      const li = c.nonReferenceLevels.indexOf(lvl)
      if (li < 0 && lvl !== c.reference) throw new EngineInputError('invalid_value', `scenario '${spec.name}': '${spec.covariate}' has no level '${lvl}'`, [spec.covariate])
      if (li >= 0) setSlot[li] = 1
    }
  }
  let inSubset: Uint8Array | null = null
  if (spec.villages?.length) {
    const cls = requireClusters(design)
    const idx = new Map(design.clusterLabels.map((l, g) => [l, g]))
    const chosen = new Uint8Array(design.clusterLabels.length)
    for (const v of spec.villages) {
      const g = idx.get(String(v))
      if (g === undefined) throw new EngineInputError('invalid_value', `scenario '${spec.name}': unknown village '${v}'`, [String(v)])
      chosen[g] = 1
    }
    inSubset = new Uint8Array(n)
    for (let i = 0; i < n; i++) inSubset[i] = chosen[cls[i]!]!
  }
  const Xs = Float64Array.from(X)
  const changed = new Uint8Array(n)
  let rowsChanged = 0
  const prof = emptyProfile(plan)
  const xs = new Float64Array(k)
  for (let i = 0; i < n; i++) {
    if (inSubset && !inSubset[i]) continue
    const off = i * k
    changed[i] = 1
    rowsChanged++
    readProfile(plan, X, off, prof)
    if (setSlot) prof[ci]!.set(setSlot)
    else prof[ci]![0] = transformValue(c, untransformValue(c, prof[ci]![0]!) + spec.shift!, design.rowIndex[i]!)
    for (let j = 0; j < k; j++) xs[j] = X[off + j]!
    fillRow(plan, prof, xs)
    Xs.set(xs, off)
  }
  return { Xs, changed, rowsChanged, description: describe(spec, c.label, c.type) }
}

/**
 * Counterfactual: change in mean predicted adoption, overall (over all rows used) and by
 * village, when a covariate is set to a value or (numeric only) shifted by an amount for
 * everyone or only for the listed villages.
 */
export function scenario(design: Design, fit: FitResult, cov: Covariance, spec: ScenarioSpec): ScenarioResult {
  const { n, k, X, w } = design
  const link: Link = getLink(fit.link)
  const b = fit.coef
  const { Xs, changed: isChanged, rowsChanged, description } = scenarioMatrix(design, spec)
  const cl = design.cluster
  const G = cl ? design.clusterLabels.length : 0
  const acc = (len: number): Float64Array => new Float64Array(len)
  const gW = acc(G)
  const gBase = acc(G)
  const gScen = acc(G)
  const gJ = acc(G * k)
  const J = acc(k)
  let W = 0
  let base = 0
  let scen = 0
  for (let i = 0; i < n; i++) {
    const off = i * k
    const wi = w ? w[i]! : 1
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[off + j]! * b[j]!
    const p0 = link.cdf(eta)
    let p1 = p0
    const g = cl ? cl[i]! : -1
    if (isChanged[i]) {
      let es = 0
      for (let j = 0; j < k; j++) es += Xs[off + j]! * b[j]!
      p1 = link.cdf(es)
      const f1 = wi * link.pdf(es)
      const f0 = wi * link.pdf(eta)
      for (let j = 0; j < k; j++) {
        const d = f1 * Xs[off + j]! - f0 * X[off + j]!
        J[j]! += d
        if (g >= 0) gJ[g * k + j]! += d
      }
    }
    W += wi
    base += wi * p0
    scen += wi * p1
    if (g >= 0) {
      gW[g]! += wi
      gBase[g]! += wi * p0
      gScen[g]! += wi * p1
    }
  }
  const est = (d: number, jac: Float64Array, b0: number, b1: number): Estimate & { baseline: number, scenario: number } => ({
    baseline: b0,
    scenario: b1,
    ...makeEstimate(d, cov.V ? quadForm(cov.V, jac, k) : null)
  })
  const overall = est((scen - base) / W, J.map(v => v / W), base / W, scen / W)
  const villages: ScenarioResult['villages'] = []
  for (let g = 0; g < G; g++) {
    if (gW[g] === 0) continue
    const jg = gJ.subarray(g * k, (g + 1) * k).map(v => v / gW[g]!)
    villages.push({ village: design.clusterLabels[g]!, ...est((gScen[g]! - gBase[g]!) / gW[g]!, jg, gBase[g]! / gW[g]!, gScen[g]! / gW[g]!) })
  }
  return { name: spec.name, covariate: spec.covariate, description, rowsChanged, overall, villages }
}
