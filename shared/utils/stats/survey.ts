/**
 * Design-based covariance for a probability sample: strata h, primary sampling units
 * (PSUs, the villages) c within strata, probability weights w_i. The estimates are the
 * weighted (pseudo-) maximum likelihood ones of the pooled fit; only the covariance changes.
 *
 * Linearisation (Binder 1983): with the scores s_i = w_i ℓ'_i x_i, the PSU totals
 * z_hc = Σ_{i∈(h,c)} s_i and their stratum means z̄_h over the n_h PSUs of stratum h,
 *   V = A⁻¹ [ Σ_h (1 − f_h) n_h/(n_h − 1) Σ_c (z_hc − z̄_h)(z_hc − z̄_h)' ] A⁻¹,
 * where f_h is the sampling fraction of PSUs (0 without a finite-population correction)
 * and A is the weighted information: the observed one −H (default; the derivative of the
 * estimating equations) or the expected one Σ w_i f_i²/(F_i(1 − F_i)) x_i x_i' (as
 * iteratively reweighted least squares gives it). They coincide for the logit.
 * The fpc column holds, per row, either the number of PSUs in the stratum's population
 * (≥ 1 means a count, f_h = n_h / N_h) or the sampling fraction itself (< 1).
 * PSU labels are taken within strata (the same label in two strata is two PSUs).
 * Design degrees of freedom: PSUs − strata. A stratum with a single sampled PSU has no
 * within-stratum variance: its PSU total enters about the grand mean (see stratifiedMeat) and the
 * results carry a `singleton_stratum` warning.
 */
import type { Covariance } from './covariance'
import type { Design } from './design'
import { EngineInputError } from './errors'
import type { FitResult } from './fit'
import { invertSpd, sandwich } from './linalg'
import { getLink } from './links'
import { accessData, isMissing, toLevel, toNumber, type DataInput } from './values'

export interface SurveyColumns {
  /** Stratum index per design row, or null for one stratum. */
  strata: Int32Array | null
  strataLabels: string[]
  /** Sampling fraction of PSUs per design row (0 = no correction). */
  fraction: Float64Array | null
}

export interface SurveyCovariance extends Covariance {
  strataCount: number
  psuCount: number
  df: number
  /** Labels of strata with a single sampled PSU. */
  singletonStrata: string[]
}

/** Reads the strata and fpc columns for the rows the design used. */
export function readSurveyColumns(data: DataInput, design: Design, strata?: string, fpc?: string): SurveyColumns {
  const acc = accessData(data)
  const n = design.n
  let strataIdx: Int32Array | null = null
  const labels: string[] = []
  if (strata) {
    if (!acc.has(strata)) throw new EngineInputError('unknown_variable', `strata column '${strata}' is not a column of the data`, [strata])
    const get = acc.column(strata)
    const index = new Map<string, number>()
    strataIdx = new Int32Array(n)
    for (let r = 0; r < n; r++) {
      const raw = get(design.rowIndex[r]!)
      if (isMissing(raw)) throw new EngineInputError('invalid_value', `strata column '${strata}' is empty in row ${design.rowIndex[r]! + 1}`, [strata])
      const lvl = toLevel(raw)
      let h = index.get(lvl)
      if (h === undefined) {
        h = labels.length
        index.set(lvl, h)
        labels.push(lvl)
      }
      strataIdx[r] = h
    }
  }
  let fraction: Float64Array | null = null
  if (fpc) {
    if (!acc.has(fpc)) throw new EngineInputError('unknown_variable', `fpc column '${fpc}' is not a column of the data`, [fpc])
    const get = acc.column(fpc)
    fraction = new Float64Array(n)
    for (let r = 0; r < n; r++) {
      const row = design.rowIndex[r]!
      const raw = get(row)
      if (isMissing(raw)) throw new EngineInputError('invalid_value', `fpc column '${fpc}' is empty in row ${row + 1}`, [fpc])
      const v = toNumber(raw, fpc, row)
      if (!(v > 0)) throw new EngineInputError('invalid_value', `fpc must be positive (row ${row + 1} has ${v})`, [fpc])
      fraction[r] = v // converted to a fraction per stratum below, once n_h is known
    }
  }
  return { strata: strataIdx, strataLabels: labels, fraction }
}

/** Which PSU (stratum, cluster) each design row belongs to, with the per-stratum counts and fractions. */
export interface PsuLayout {
  /** PSU index per design row. */
  psuOf: Int32Array
  /** Stratum of each PSU. */
  psuStratum: number[]
  /** Number of strata. */
  H: number
  /** Number of PSUs. */
  C: number
  /** Sampled PSUs per stratum. */
  nh: Int32Array
  /** Sampling fraction of PSUs per stratum (0 without a finite-population correction). */
  fh: Float64Array
  /** Strata with a single PSU (their variance cannot be estimated). */
  singletons: number[]
}

/**
 * PSU identity is (stratum, cluster); without a cluster every row is its own PSU. Strata with one
 * PSU are listed in `singletons`, not refused: see stratifiedMeat, and the caller warns.
 */
export function psuLayout(design: Design, cols: SurveyColumns): PsuLayout {
  const n = design.n
  const H = (cols.strata ? Math.max(0, ...cols.strata) + 1 : 1)
  const psuKey = new Map<number, number>()
  const psuOf = new Int32Array(n)
  const psuStratum: number[] = []
  const psuFpc: number[] = []
  const G = design.cluster ? Math.max(design.clusterLabels.length, 1) : 0
  for (let i = 0; i < n; i++) {
    const h = cols.strata ? cols.strata[i]! : 0
    const key = design.cluster ? h * G + design.cluster[i]! : i
    let c = psuKey.get(key)
    if (c === undefined) {
      c = psuStratum.length
      psuKey.set(key, c)
      psuStratum.push(h)
      psuFpc.push(cols.fraction ? cols.fraction[i]! : 0)
    }
    else if (cols.fraction && psuFpc[c] !== cols.fraction[i]) {
      throw new EngineInputError('invalid_value', 'the fpc must be the same for every row of a stratum', [])
    }
    psuOf[i] = c
  }
  const C = psuStratum.length
  const nh = new Int32Array(H)
  for (let c = 0; c < C; c++) nh[psuStratum[c]!]!++
  const fh = new Float64Array(H)
  if (cols.fraction) {
    for (let c = 0; c < C; c++) {
      const h = psuStratum[c]!
      const v = psuFpc[c]!
      const f = v < 1 ? v : nh[h]! / v
      if (f > 1 + 1e-12) throw new EngineInputError('invalid_value', `the fpc says stratum ${cols.strataLabels[h] ?? h + 1} has fewer PSUs (${v}) than were sampled (${nh[h]})`)
      fh[h] = f
    }
  }
  const singletons: number[] = []
  for (let h = 0; h < H; h++) if (nh[h] === 1) singletons.push(h)
  return { psuOf, psuStratum, H, C, nh, fh, singletons }
}

/**
 * Σ_h (1 − f_h) n_h/(n_h − 1) Σ_c (z_hc − z̄_h)(z_hc − z̄_h)' for PSU totals Z (C×k, row-major).
 * A stratum with one PSU contributes its uncentred total (the scores and influence values used here
 * sum to 0 over the sample, so that is centring at the grand mean), and the caller warns.
 */
export function stratifiedMeat(Z: Float64Array, lay: PsuLayout, k: number): Float64Array {
  const { C, H, nh, fh, psuStratum } = lay
  const mean = new Float64Array(H * k)
  for (let c = 0; c < C; c++) {
    const h = psuStratum[c]!
    for (let j = 0; j < k; j++) mean[h * k + j]! += Z[c * k + j]! / nh[h]!
  }
  const meat = new Float64Array(k * k)
  const d = new Float64Array(k)
  for (let c = 0; c < C; c++) {
    const h = psuStratum[c]!
    // A stratum with one PSU: its total is taken about the grand mean, which is 0 for estimating
    // equations solved at the estimate (the "adjust" treatment of a lonely PSU), scaled by 1 − f_h.
    const lonely = nh[h]! < 2
    const factor = lonely ? 1 - fh[h]! : (1 - fh[h]!) * nh[h]! / (nh[h]! - 1)
    for (let j = 0; j < k; j++) d[j] = Z[c * k + j]! - (lonely ? 0 : mean[h * k + j]!)
    for (let j = 0; j < k; j++) {
      const dj = factor * d[j]!
      for (let m = 0; m <= j; m++) meat[j * k + m]! += dj * d[m]!
    }
  }
  for (let j = 0; j < k; j++) for (let m = 0; m < j; m++) meat[m * k + j] = meat[j * k + m]!
  return meat
}

export function surveyCovariance(
  design: Design, fit: FitResult, cols: SurveyColumns, bread: 'observed' | 'expected' = 'observed'
): SurveyCovariance {
  const { n, k, X, y, w } = design
  if (!w) throw new EngineInputError('invalid_spec', 'a survey design needs probability weights')
  const link = getLink(fit.link)
  const lay = psuLayout(design, cols)
  const { psuOf, H, C } = lay
  const t = new Float64Array(3)
  const Z = new Float64Array(C * k)
  const A = new Float64Array(k * k)
  const b = fit.coef
  for (let i = 0; i < n; i++) {
    const off = i * k
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[off + j]! * b[j]!
    link.obsTerms(eta, y[i]!, t)
    const s = w[i]! * t[1]!
    const zo = psuOf[i]! * k
    for (let j = 0; j < k; j++) Z[zo + j]! += s * X[off + j]!
    if (bread === 'expected') {
      link.obsTerms(eta, 1, t)
      const l1 = t[1]!
      link.obsTerms(eta, 0, t)
      const a = w[i]! * l1 * -t[1]!
      for (let j = 0; j < k; j++) {
        const xa = a * X[off + j]!
        for (let m = 0; m <= j; m++) A[j * k + m]! += xa * X[off + m]!
      }
    }
  }
  if (bread === 'expected') {
    for (let j = 0; j < k; j++) for (let m = 0; m < j; m++) A[m * k + j] = A[j * k + m]!
  }
  else for (let i = 0; i < k * k; i++) A[i] = -fit.hessian[i]!
  const meat = stratifiedMeat(Z, lay, k)
  const Ainv = invertSpd(A, k)
  const df = C - H
  return {
    type: 'survey',
    V: Ainv ? sandwich(Ainv, meat, k) : null,
    factor: 1,
    clusters: C,
    strataCount: H,
    psuCount: C,
    df,
    singletonStrata: lay.singletons.map(h => cols.strataLabels[h] ?? String(h + 1))
  }
}
