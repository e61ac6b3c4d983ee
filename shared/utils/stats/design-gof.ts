/**
 * Design-adjusted goodness of fit for a model fitted with probability weights: the F-adjusted
 * mean residual test of Archer & Lemeshow (2006), in place of Hosmer–Lemeshow, which assumes
 * independent, equally weighted farms and changes with the scale of the weights.
 *
 * 1. Residuals r_i = y_i − p̂_i.
 * 2. g groups (deciles) of the weighted distribution of p̂: farms sorted by p̂, farm i goes to
 *    group ⌈g · c_i / W⌉, c_i the cumulative weight up to and including farm i (tied p̂ share the
 *    group of the last of them), W the total weight. Empty groups are left out.
 * 3. The weighted mean residual of each group, M_l = Σ_{i∈l} w_i r_i / Σ_{i∈l} w_i, and their
 *    design-based covariance by linearisation: influence values z_il = w_i (r_i − M_l) / Σ_{i∈l} w_i
 *    summed per PSU, then the stratified-cluster formula of survey.ts (with the fpc when given).
 *    As in the published test, the residuals are treated as data (the estimation of β is ignored).
 * 4. Wald statistic W = M' V⁻¹ M (V has full rank only with f ≥ g), and with f design degrees of freedom (PSUs − strata)
 *    F = (f − g + 2) W / (f g) on (g − 1, f − g + 2) degrees of freedom (Archer & Lemeshow 2006).
 * Published for the logit; used here for every link, as the residuals' means are link-free.
 */
import { fSf } from './distributions'
import type { Design } from './design'
import { invertSpd } from './linalg'
import { stratifiedMeat, type PsuLayout } from './survey'
import type { DesignGof, DesignGofGroup } from './types'

export function designGroups(p: Float64Array, w: Float64Array, groups: number): Int32Array {
  const n = p.length
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => p[a]! - p[b]! || a - b)
  let total = 0
  for (let i = 0; i < n; i++) total += w[i]!
  const g = new Int32Array(n)
  let cum = 0
  let r = 0
  while (r < n) {
    // One block of tied p̂: all take the group of the block's end.
    let e = r
    let block = 0
    while (e < n && p[order[e]!] === p[order[r]!]) block += w[order[e++]!]!
    cum += block
    const l = Math.min(groups, Math.max(1, Math.ceil(groups * cum / total - 1e-9)))
    for (let t = r; t < e; t++) g[order[t]!] = l - 1
    r = e
  }
  return g
}

export function archerLemeshow(design: Design, p: Float64Array, lay: PsuLayout, groups = 10): DesignGof {
  const { n, y } = design
  const w = design.w ?? new Float64Array(n).fill(1)
  const raw = designGroups(p, w, groups)
  // Renumber the non-empty groups 0..G−1.
  const used = new Int32Array(groups).fill(-1)
  for (let i = 0; i < n; i++) used[raw[i]!] = 1
  let G = 0
  for (let l = 0; l < groups; l++) if (used[l]! > 0) used[l] = G++
  const grp = new Int32Array(n)
  for (let i = 0; i < n; i++) grp[i] = used[raw[i]!]!
  const wsum = new Float64Array(G)
  const rsum = new Float64Array(G)
  const psum = new Float64Array(G)
  const ysum = new Float64Array(G)
  const count = new Int32Array(G)
  for (let i = 0; i < n; i++) {
    const l = grp[i]!
    wsum[l]! += w[i]!
    rsum[l]! += w[i]! * (y[i]! - p[i]!)
    psum[l]! += w[i]! * p[i]!
    ysum[l]! += w[i]! * y[i]!
    count[l]!++
  }
  const M = new Float64Array(G)
  for (let l = 0; l < G; l++) M[l] = rsum[l]! / wsum[l]!
  const Z = new Float64Array(lay.C * G)
  for (let i = 0; i < n; i++) {
    const l = grp[i]!
    Z[lay.psuOf[i]! * G + l]! += w[i]! * (y[i]! - p[i]! - M[l]!) / wsum[l]!
  }
  const V = stratifiedMeat(Z, lay, G)
  const f = lay.C - lay.H
  const out: DesignGofGroup[] = []
  let lo = 0
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => grp[a]! - grp[b]! || p[a]! - p[b]!)
  for (let l = 0; l < G; l++) {
    const first = lo
    while (lo < n && grp[order[lo]!] === l) lo++
    out.push({
      group: l + 1,
      n: count[l]!,
      weight: wsum[l]!,
      minPredicted: p[order[first]!]!,
      maxPredicted: p[order[lo - 1]!]!,
      meanPredicted: psum[l]! / wsum[l]!,
      observedRate: ysum[l]! / wsum[l]!,
      meanResidual: M[l]!,
      se: Math.sqrt(Math.max(0, V[l * G + l]!))
    })
  }
  const inv = invertSpd(V, G)
  let W: number | null = null
  if (inv) {
    W = 0
    for (let a = 0; a < G; a++) for (let b = 0; b < G; b++) W += M[a]! * inv[a * G + b]! * M[b]!
  }
  const numDf = G - 1
  const denDf = f - G + 2
  // G means need at least G design degrees of freedom for their covariance to be of full rank.
  const F = W !== null && f >= G && numDf >= 1 ? (denDf * W) / (f * G) : null
  const pValue = F !== null ? fSf(F, numDf, denDf) : null
  let reading: string
  if (F === null) {
    reading = f < G
      ? `Too few sampled villages for this test: it needs at least ${G} design degrees of freedom, the design has ${f}.`
      : 'The test could not be computed: the groups\' mean residuals have a singular covariance.'
  }
  else if (pValue! < 0.05) reading = 'Some groups of farms adopt more or less often than predicted, beyond what the sampling explains: the model misses a pattern.'
  else reading = 'Groups of farms adopt about as often as predicted, allowing for the sampling plan.'
  return { method: 'archer-lemeshow', groups: out, wald: W, statistic: F, numDf, denDf, designDf: f, p: pValue, reading }
}
