/**
 * What the village random-intercept model adds to the results: σ, the latent
 * intra-village correlation ρ, the LR test of σ = 0, the quadrature check, marginal
 * effects averaged over the village effect, and village predictions with the predicted
 * (empirical Bayes) village effects.
 *
 * - ρ = σ² / (σ² + v), v = 1 (probit) or π²/3 (logit), the share of the latent-index
 *   variance that lies between villages; SE by the delta method, dρ/dσ = 2σv / (σ² + v)².
 * - LR = 2(ℓ_RE − ℓ_pooled). σ = 0 is on the boundary of the parameter space, so the
 *   null distribution is ½χ²₀ + ½χ²₁ (Self & Liang 1987): p = ½ P(χ²₁ ≥ LR) for LR > 0.
 * - Population-averaged probability F*(t) = ∫ F(t + σu) φ(u) du = E_u F(t + σu). For the
 *   probit F*(t) = Φ(t / √(1 + σ²)) exactly; for the logit it is a Gauss–Hermite sum with
 *   40 points. Marginal effects are those of F* (averaged over farms as usual), with
 *   delta-method SEs over (β, σ) (∂/∂σ by a central difference).
 * - Village j: with the posterior weights p_jq of the AGHQ nodes u_jq,
 *   effect mean σ Σ_q p_jq u_jq and SD, mode σ û_j, and predicted adoption
 *   Σ_q p_jq mean_{i∈j} F(x_i'β + σ u_jq) with its posterior SD (β and σ held at their
 *   estimates).
 */
import type { Design } from './design'
import { chiSquareSf } from './distributions'
import type { Link, LinkName } from './links'
import { getLink } from './links'
import { effectIdentity, marginValues, type MarginsOptions } from './margins'
import { normCdf, normPdf } from './normal'
import { gaussHermite, normalRule } from './quadrature'
import { quadratureCheck, type RandomInterceptFit } from './random-intercept'
import { makeEstimate } from './summary'
import type { Margins, MarginalEffect, RandomInterceptResults, VillageEffect, VillagePrediction } from './types'

export function latentVariance(link: LinkName): number {
  return link === 'logit' ? Math.PI * Math.PI / 3 : 1
}

/** F*(t) = E_u F(t + σu), its density and the density's derivative. */
export function populationAveragedLink(linkName: LinkName, sigma: number): Pick<Link, 'cdf' | 'pdf' | 'dpdf'> {
  if (linkName === 'probit') {
    const s = Math.sqrt(1 + sigma * sigma)
    return {
      cdf: t => normCdf(t / s),
      pdf: t => normPdf(t / s) / s,
      dpdf: t => -(t / s) * normPdf(t / s) / (s * s)
    }
  }
  const link = getLink(linkName)
  const { nodes, weights } = normalRule(40)
  const avg = (fn: (t: number) => number) => (t: number): number => {
    let acc = 0
    for (let q = 0; q < nodes.length; q++) acc += weights[q]! * fn(t + sigma * nodes[q]!)
    return acc
  }
  return { cdf: avg(link.cdf), pdf: avg(link.pdf), dpdf: avg(link.dpdf) }
}

/** Marginal effects of the population-averaged probability, SEs over (β, σ). */
export function randomInterceptMargins(design: Design, fit: RandomInterceptFit, options: MarginsOptions = {}): Margins {
  const k = design.k
  const K = k + 1
  const b = fit.theta.subarray(0, k)
  const sigma = fit.theta[k]!
  const base = marginValues(design, populationAveragedLink(fit.link, sigma), Float64Array.from(b), options)
  const h = 1e-5 * Math.max(1, sigma)
  const up = marginValues(design, populationAveragedLink(fit.link, sigma + h), Float64Array.from(b), options).values
  const down = marginValues(design, populationAveragedLink(fit.link, Math.max(0, sigma - h)), Float64Array.from(b), options).values
  const width = sigma + h - Math.max(0, sigma - h)
  const effects: MarginalEffect[] = base.effects.map((ef, e) => {
    let variance: number | null = null
    if (fit.V) {
      const J = new Float64Array(K)
      J.set(base.jac[e]!)
      J[k] = (up[e]! - down[e]!) / width
      let v = 0
      for (let i = 0; i < K; i++) for (let j = 0; j < K; j++) v += J[i]! * fit.V[i * K + j]! * J[j]!
      variance = v
    }
    return { ...effectIdentity(design, ef), ...makeEstimate(base.values[e]!, variance) }
  })
  const kind = options.kind ?? 'ame'
  return { kind, covariance: 'conventional', ...(kind === 'at' ? { at: { ...options.at } } : {}), effects }
}

/** Population-averaged p̂ per design row (for a farm in a village not yet seen). */
export function populationAveragedProbabilities(design: Design, fit: RandomInterceptFit): Float64Array {
  const { n, k, X } = design
  const F = populationAveragedLink(fit.link, fit.theta[k]!)
  const p = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[i * k + j]! * fit.theta[j]!
    p[i] = F.cdf(eta)
  }
  return p
}

/** Village predictions and predicted village effects from the AGHQ posterior at θ̂. */
export function randomInterceptVillages(design: Design, fit: RandomInterceptFit): { villages: VillagePrediction[], effects: VillageEffect[] } {
  const lay = fit.layout
  const { k, G, X, y, start } = lay
  const link = getLink(fit.link)
  const sigma = fit.theta[k]!
  const { nodes } = gaussHermite(fit.points)
  const Q = fit.points
  const villages: VillagePrediction[] = []
  const effects: VillageEffect[] = []
  const mq = new Float64Array(Q)
  const uq = new Float64Array(Q)
  for (let g = 0; g < G; g++) {
    const s = start[g]!
    const m = start[g + 1]! - s
    if (m === 0) continue
    const u = fit.pass.modes[g]!
    const spread = Math.SQRT2 * fit.pass.scales[g]!
    for (let q = 0; q < Q; q++) uq[q] = u + spread * nodes[q]!
    mq.fill(0)
    let ones = 0
    for (let r = 0; r < m; r++) {
      const off = (s + r) * k
      let e = 0
      for (let j = 0; j < k; j++) e += X[off + j]! * fit.theta[j]!
      for (let q = 0; q < Q; q++) mq[q]! += link.cdf(e + sigma * uq[q]!)
      ones += y[s + r]!
    }
    let pm = 0
    let pm2 = 0
    let um = 0
    let um2 = 0
    for (let q = 0; q < Q; q++) {
      const pq = fit.pass.posterior[g * Q + q]!
      const v = mq[q]! / m
      pm += pq * v
      pm2 += pq * v * v
      um += pq * uq[q]!
      um2 += pq * uq[q]! * uq[q]!
    }
    const label = design.clusterLabels[g] ?? String(g)
    const est = makeEstimate(pm, Math.max(0, pm2 - pm * pm))
    if (est.ciLow !== null) est.ciLow = Math.max(0, est.ciLow)
    if (est.ciHigh !== null) est.ciHigh = Math.min(1, est.ciHigh)
    villages.push({ village: label, n: m, observedRate: ones / m, ...est })
    effects.push({ village: label, n: m, mode: sigma * u, mean: sigma * um, sd: sigma * Math.sqrt(Math.max(0, um2 - um * um)) })
  }
  return { villages, effects }
}

export function randomInterceptSummary(design: Design, fit: RandomInterceptFit, effects: VillageEffect[]): RandomInterceptResults {
  const k = design.k
  const K = k + 1
  const sigma = fit.theta[k]!
  const varSigma = fit.V ? fit.V[k * K + k]! : null
  const v = latentVariance(fit.link)
  const rho = sigma * sigma / (sigma * sigma + v)
  const dRho = 2 * sigma * v / ((sigma * sigma + v) ** 2)
  const stat = Math.max(0, 2 * (fit.loglik - fit.pooledLoglik))
  const p = stat > 0 ? 0.5 * chiSquareSf(stat, 1) : 1
  const check = quadratureCheck(fit)
  const reading = p < 0.05
    ? `Adoption varies between villages beyond what the covariates explain (${(100 * rho).toFixed(0)}% of the latent variation lies between villages).`
    : 'No clear evidence that adoption varies between villages once the covariates are accounted for.'
  return {
    quadPoints: fit.points,
    sigma: makeEstimate(sigma, varSigma),
    rho: makeEstimate(rho, varSigma === null ? null : dRho * dRho * varSigma),
    lrTest: { statistic: stat, df: 1, p, pooledLoglik: fit.pooledLoglik, reading },
    quadratureCheck: { ...check, stable: check.maxChangeInSe < 0.01 },
    villageEffects: effects
  }
}

/**
 * Mean population-averaged adoption over the rows used, with its delta-method SE over
 * (β, σ): the headline figure for farms like these in villages like these.
 */
export function populationAveragedMean(design: Design, fit: RandomInterceptFit): VillagePrediction {
  const { n, k, X, y } = design
  const K = k + 1
  const sigma = fit.theta[k]!
  const h = 1e-5 * Math.max(1, sigma)
  const F = populationAveragedLink(fit.link, sigma)
  const Fu = populationAveragedLink(fit.link, sigma + h)
  const Fd = populationAveragedLink(fit.link, Math.max(0, sigma - h))
  const width = sigma + h - Math.max(0, sigma - h)
  const J = new Float64Array(K)
  let mean = 0
  let ones = 0
  for (let i = 0; i < n; i++) {
    let eta = 0
    for (let j = 0; j < k; j++) eta += X[i * k + j]! * fit.theta[j]!
    mean += F.cdf(eta)
    const f = F.pdf(eta)
    for (let j = 0; j < k; j++) J[j]! += f * X[i * k + j]!
    J[k]! += (Fu.cdf(eta) - Fd.cdf(eta)) / width
    ones += y[i]!
  }
  let variance: number | null = null
  if (fit.V) {
    variance = 0
    for (let i = 0; i < K; i++) for (let j = 0; j < K; j++) variance += J[i]! * fit.V[i * K + j]! * J[j]! / (n * n)
  }
  return { village: 'all', n, observedRate: ones / n, ...makeEstimate(mean / n, variance) }
}
