/**
 * Scenarios (what-if predictions) for the village random-intercept model.
 *
 * - Overall: averaged over the village effect, F*(t) = E_u F(t + σu) (see
 *   random-intercept-results.ts): the change for farms like these in villages like these, the
 *   same basis as the headline figure. Δ = mean_i F*(η_i^s) − F*(η_i); delta-method SE over
 *   (β, σ), ∂/∂σ by a central difference.
 * - By village: with the predicted village effects, i.e. integrated over each village's
 *   posterior of u_j at the AGHQ nodes (weights p_jq), Δ_j = Σ_q p_jq mean_{i∈j} [F(η_i^s + σu_jq) −
 *   F(η_i + σu_jq)], with its posterior SD (β and σ held at their estimates). Why: a village
 *   that adopts more than its farms' characteristics suggest keeps that level under the
 *   scenario, so its baseline is the village prediction shown on the results page and the map.
 */
import type { Design } from './design'
import { getLink } from './links'
import { gaussHermite } from './quadrature'
import { populationAveragedLink } from './random-intercept-results'
import type { RandomInterceptFit } from './random-intercept'
import { scenarioMatrix } from './predict'
import { makeEstimate } from './summary'
import type { Estimate, ScenarioResult, ScenarioSpec } from './types'

export function randomInterceptScenario(design: Design, fit: RandomInterceptFit, spec: ScenarioSpec): ScenarioResult {
  const { n, k, X } = design
  const K = k + 1
  const { Xs, changed, rowsChanged, description } = scenarioMatrix(design, spec)
  const b = fit.theta
  const sigma = fit.theta[k]!
  const eta = new Float64Array(n)
  const etaS = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    let e = 0
    let es = 0
    for (let j = 0; j < k; j++) {
      e += X[i * k + j]! * b[j]!
      es += Xs[i * k + j]! * b[j]!
    }
    eta[i] = e
    etaS[i] = es
  }

  // Overall, averaged over the village effect.
  const h = 1e-5 * Math.max(1, sigma)
  const F = populationAveragedLink(fit.link, sigma)
  const Fu = populationAveragedLink(fit.link, sigma + h)
  const Fd = populationAveragedLink(fit.link, Math.max(0, sigma - h))
  const width = sigma + h - Math.max(0, sigma - h)
  const J = new Float64Array(K)
  let base = 0
  let scen = 0
  for (let i = 0; i < n; i++) {
    const p0 = F.cdf(eta[i]!)
    base += p0
    if (!changed[i]) {
      scen += p0
      continue
    }
    scen += F.cdf(etaS[i]!)
    const f1 = F.pdf(etaS[i]!)
    const f0 = F.pdf(eta[i]!)
    for (let j = 0; j < k; j++) J[j]! += f1 * Xs[i * k + j]! - f0 * X[i * k + j]!
    J[k]! += ((Fu.cdf(etaS[i]!) - Fd.cdf(etaS[i]!)) - (Fu.cdf(eta[i]!) - Fd.cdf(eta[i]!))) / width
  }
  let variance: number | null = null
  if (fit.V) {
    variance = 0
    for (let a = 0; a < K; a++) for (let c = 0; c < K; c++) variance += J[a]! * fit.V[a * K + c]! * J[c]! / (n * n)
  }
  const overall: Estimate & { baseline: number, scenario: number } = {
    baseline: base / n, scenario: scen / n, ...makeEstimate((scen - base) / n, variance)
  }

  // By village, with the predicted village effects (posterior at θ̂).
  const lay = fit.layout
  const link = getLink(fit.link)
  const Q = fit.points
  const { nodes } = gaussHermite(Q)
  const villages: ScenarioResult['villages'] = []
  const m0 = new Float64Array(Q)
  const m1 = new Float64Array(Q)
  for (let g = 0; g < lay.G; g++) {
    const s = lay.start[g]!
    const m = lay.start[g + 1]! - s
    if (m === 0) continue
    const u = fit.pass.modes[g]!
    const spread = Math.SQRT2 * fit.pass.scales[g]!
    m0.fill(0)
    m1.fill(0)
    for (let r = 0; r < m; r++) {
      const i = lay.order[s + r]!
      for (let q = 0; q < Q; q++) {
        const su = sigma * (u + spread * nodes[q]!)
        const p0 = link.cdf(eta[i]! + su)
        m0[q]! += p0
        m1[q]! += changed[i] ? link.cdf(etaS[i]! + su) : p0
      }
    }
    let b0 = 0
    let b1 = 0
    let d1 = 0
    let d2 = 0
    for (let q = 0; q < Q; q++) {
      const pq = fit.pass.posterior[g * Q + q]!
      const d = (m1[q]! - m0[q]!) / m
      b0 += pq * m0[q]! / m
      b1 += pq * m1[q]! / m
      d1 += pq * d
      d2 += pq * d * d
    }
    villages.push({ village: design.clusterLabels[g] ?? String(g), baseline: b0, scenario: b1, ...makeEstimate(d1, Math.max(0, d2 - d1 * d1)) })
  }
  return { name: spec.name, covariate: spec.covariate, description, rowsChanged, overall, villages }
}
