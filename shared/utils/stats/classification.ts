/**
 * Predictive fit: classification table, ROC curve with AUC, Hosmer–Lemeshow test.
 * All accept optional weights (counts become sums of weights).
 */
import { chiSquareSf } from './distributions'
import type { ClassificationTable, HosmerLemeshow, HosmerLemeshowGroup, RocPoint } from './types'

/** Table at cut-off c: predict 1 when p̂ ≥ c. */
export function classificationTable(p: Float64Array, y: Float64Array, w: Float64Array | null, cutoff = 0.5): ClassificationTable {
  let tp = 0
  let fp = 0
  let tn = 0
  let fn = 0
  for (let i = 0; i < p.length; i++) {
    const wi = w ? w[i]! : 1
    const pred = p[i]! >= cutoff
    if (y[i] === 1) {
      if (pred) tp += wi
      else fn += wi
    }
    else if (pred) fp += wi
    else tn += wi
  }
  const total = tp + fp + tn + fn
  return {
    cutoff,
    truePositive: tp,
    falsePositive: fp,
    trueNegative: tn,
    falseNegative: fn,
    sensitivity: tp + fn > 0 ? tp / (tp + fn) : null,
    specificity: tn + fp > 0 ? tn / (tn + fp) : null,
    shareCorrect: (tp + tn) / total
  }
}

function orderByPrediction(p: Float64Array, descending: boolean): Uint32Array {
  const idx = new Uint32Array(p.length)
  for (let i = 0; i < idx.length; i++) idx[i] = i
  // Ties broken by row index so that the order (and the HL groups) is deterministic.
  idx.sort((a, b) => (descending ? p[b]! - p[a]! : p[a]! - p[b]!) || a - b)
  return idx
}

/**
 * ROC curve over all distinct thresholds (predict 1 when p̂ ≥ threshold) and the area
 * under it by the trapezoid rule, which equals the Mann–Whitney probability
 * P(p̂₁ > p̂₀) + ½ P(p̂₁ = p̂₀). At most `maxPoints` evenly spaced points are returned.
 */
export function rocCurve(p: Float64Array, y: Float64Array, w: Float64Array | null, maxPoints = 101): { auc: number, points: RocPoint[] } {
  const idx = orderByPrediction(p, true)
  let P = 0
  let Nn = 0
  for (let i = 0; i < p.length; i++) {
    const wi = w ? w[i]! : 1
    if (y[i] === 1) P += wi
    else Nn += wi
  }
  const all: RocPoint[] = [{ threshold: Infinity, falsePositiveRate: 0, truePositiveRate: 0 }]
  let tp = 0
  let fp = 0
  let auc = 0
  let i = 0
  while (i < idx.length) {
    const thr = p[idx[i]!]!
    const tp0 = tp
    const fp0 = fp
    while (i < idx.length && p[idx[i]!] === thr) {
      const r = idx[i]!
      const wi = w ? w[r]! : 1
      if (y[r] === 1) tp += wi
      else fp += wi
      i++
    }
    auc += (fp - fp0) * (tp + tp0) / 2
    all.push({ threshold: thr, falsePositiveRate: fp / Nn, truePositiveRate: tp / P })
  }
  auc /= P * Nn
  let points = all
  if (all.length > maxPoints) {
    points = []
    for (let j = 0; j < maxPoints; j++) points.push(all[Math.round((j * (all.length - 1)) / (maxPoints - 1))]!)
  }
  // Infinity is not JSON: the first point's threshold is stated as 1 (nothing predicted 1 above it).
  points = points.map(pt => (Number.isFinite(pt.threshold) ? pt : { ...pt, threshold: 1 }))
  return { auc, points }
}

/**
 * Hosmer–Lemeshow test: rows sorted by p̂ are cut into g groups of (nearly) equal row
 * counts; C = Σ_g (O_g − E_g)² / (E_g (1 − E_g/n_g)) with O, E observed and expected
 * ones and n_g the group size (weighted sums when weighted); C ~ χ²(g − 2).
 */
export function hosmerLemeshow(p: Float64Array, y: Float64Array, w: Float64Array | null, groups = 10): HosmerLemeshow {
  const n = p.length
  const g = Math.max(3, Math.min(groups, n))
  const idx = orderByPrediction(p, false)
  const out: HosmerLemeshowGroup[] = []
  let stat = 0
  for (let q = 0; q < g; q++) {
    const lo = Math.floor((q * n) / g)
    const hi = Math.floor(((q + 1) * n) / g)
    let size = 0
    let obs = 0
    let exp = 0
    let minP = Infinity
    let maxP = -Infinity
    for (let r = lo; r < hi; r++) {
      const i = idx[r]!
      const wi = w ? w[i]! : 1
      size += wi
      obs += wi * y[i]!
      exp += wi * p[i]!
      minP = Math.min(minP, p[i]!)
      maxP = Math.max(maxP, p[i]!)
    }
    const denom = exp * (1 - exp / size)
    if (denom > 0) stat += ((obs - exp) * (obs - exp)) / denom
    out.push({
      group: q + 1,
      n: hi - lo,
      minPredicted: minP,
      maxPredicted: maxP,
      observed: obs,
      expected: exp,
      observedRate: obs / size,
      meanPredicted: exp / size
    })
  }
  return { statistic: stat, df: g - 2, p: chiSquareSf(stat, g - 2), groups: out }
}
