/**
 * Village random intercept (adaptive Gauss–Hermite quadrature) against R's
 * lme4::glmer(family = binomial(link = "probit" | "logit"), nAGQ = Q) from Debian's
 * r-cran-lme4, run by this test through tests/reference/glmer_ri.R, on generated designs
 * and on lme4's published `cbpp` data (herds as clusters; tests/fixtures/reference/README.md).
 * glmer's own deviance function is also evaluated at OUR estimates, so the likelihood is
 * compared at identical parameters. Fails (does not skip) when R or lme4 is missing.
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import {
  buildDesign, designFromMatrix, fitRandomIntercept, gaussHermite, normalRule, populationAveragedLink,
  randomInterceptMargins, runModel, type Design, type LinkName, type RandomInterceptFit
} from '../../../shared/utils/stats/index'
import { normal, prng } from '../../../shared/utils/random/prng'
import { FIXTURES, readCsv, relErr } from './helpers'

const script = fileURLToPath(new URL('../../reference/glmer_ri.R', import.meta.url))

interface Case { id: string, link: LinkName, points: number, design: Design, fit: RandomInterceptFit }

function generated(seed: number, link: LinkName, G: number, per: number, kx: number, points: number, sd: number): Case {
  const u = prng(seed)
  const n = G * per
  const k = kx + 1
  const X = new Float64Array(n * k)
  const y = new Float64Array(n)
  const g = new Int32Array(n)
  const re = Array.from({ length: G }, () => sd * normal(u))
  for (let i = 0; i < n; i++) {
    // Unequal village sizes: every third village gets a third of its rows.
    g[i] = i % G
    if (g[i]! % 3 === 0 && u() < 0.66) g[i] = (g[i]! + 1) % G
    X[i * k] = 1
    let eta = -0.4 + re[g[i]!]!
    for (let j = 1; j < k; j++) {
      const v = j % 2 ? normal(u) + 0.3 * re[g[i]!]! : (u() < 0.4 ? 1 : 0)
      X[i * k + j] = v
      eta += (0.6 - 0.25 * j) * v
    }
    const e = link === 'probit' ? normal(u) : Math.log(1 / u() - 1)
    y[i] = eta + e > 0 ? 1 : 0
  }
  const design = designFromMatrix(X, y, Array.from({ length: kx }, (_, j) => `x${j + 1}`), { cluster: g })
  return { id: `gen${seed}`, link, points, design, fit: fitRandomIntercept(design, link, { quadPoints: points }) }
}

function cbpp(link: LinkName, points: number): Case {
  const rows = readCsv(join(FIXTURES, 'reference', 'cbpp-herds.csv'))
  const design = buildDesign(rows, {
    outcome: 'y', covariates: [{ name: 'period', type: 'categorical', reference: '1' }], cluster: 'herd'
  })
  return { id: `cbpp-${link}`, link, points, design, fit: fitRandomIntercept(design, link, { quadPoints: points }) }
}

const cases: Case[] = [
  generated(1, 'probit', 40, 25, 3, 12, 0.8),
  generated(2, 'logit', 60, 15, 2, 12, 1.2),
  generated(3, 'probit', 30, 40, 4, 5, 0.6),
  generated(4, 'logit', 50, 20, 3, 25, 0.9),
  generated(5, 'probit', 120, 8, 2, 7, 0.5),
  generated(6, 'logit', 25, 60, 5, 12, 0.4),
  cbpp('logit', 12),
  cbpp('probit', 25)
]

interface Ref { id: string, beta: number[], sigma: number, loglik: number, loglikAtOurs: number, modes: number[], levels: string[] }
let ref: Ref[] = []
const worst: Record<string, number> = {}
const track = (name: string, e: number): void => {
  worst[name] = Math.max(worst[name] ?? 0, e)
}

beforeAll(() => {
  const probe = spawnSync('Rscript', ['-e', 'suppressPackageStartupMessages({library(lme4); library(jsonlite)})'], { encoding: 'utf8' })
  if (probe.status !== 0) throw new Error(`this test needs R with lme4 and jsonlite (Debian r-base-core, r-cran-lme4, r-cran-jsonlite): ${probe.stderr || probe.error}`)
  const dir = mkdtempSync(join(tmpdir(), 'fc-glmer-'))
  const input = cases.map((c) => {
    const k = c.design.k
    return {
      id: c.id, link: c.link, nAGQ: c.points, k, X: Array.from(c.design.X), y: Array.from(c.design.y),
      g: Array.from(c.design.cluster!).map(v => `v${String(v).padStart(4, '0')}`),
      ours: { beta: Array.from(c.fit.theta.subarray(0, k)), sigma: c.fit.theta[k]! }
    }
  })
  writeFileSync(join(dir, 'in.json'), JSON.stringify(input))
  const r = spawnSync('Rscript', [script, join(dir, 'in.json'), join(dir, 'out.json')], { encoding: 'utf8', maxBuffer: 1 << 26 })
  if (r.status !== 0) throw new Error(`glmer reference script failed: ${r.stderr}`)
  ref = JSON.parse(readFileSync(join(dir, 'out.json'), 'utf8'))
}, 300_000)

afterAll(() => {
  console.log('largest relative deviations from lme4::glmer:', JSON.stringify(worst))
})

describe('random intercept vs lme4::glmer (adaptive Gauss–Hermite)', () => {
  for (const [idx, c] of cases.entries()) {
    it(`${c.id}: ${c.link}, n=${c.design.n}, villages=${c.fit.layout.G}, k=${c.design.k}, ${c.points} points`, () => {
      const r = ref[idx]!
      const k = c.design.k
      expect(c.fit.converged).toBe(true)
      for (let j = 0; j < k; j++) {
        const e = relErr(c.fit.theta[j]!, r.beta[j]!, 1e-2)
        track('beta', e)
        expect(e, `beta ${j}`).toBeLessThan(1e-4)
      }
      const es = relErr(c.fit.theta[k]!, r.sigma)
      track('sigma', es)
      expect(es).toBeLessThan(1e-4)
      const el = relErr(c.fit.loglik, r.loglik)
      track('loglik', el)
      expect(el).toBeLessThan(1e-6)
      // Same parameters, same approximation: only rounding should differ.
      const ea = relErr(c.fit.loglik, r.loglikAtOurs)
      track('loglikAtSameParameters', ea)
      expect(ea).toBeLessThan(1e-9)
      // lme4's conditional modes are of the village effect σu (ranef), in level order.
      const labels = Array.from(c.design.cluster!).map(v => `v${String(v).padStart(4, '0')}`)
      const modeOf = new Map<string, number>()
      labels.forEach((l, i) => modeOf.set(l, c.fit.pass.modes[c.design.cluster![i]!]! * c.fit.theta[k]!))
      r.levels.forEach((l, j) => {
        const e = Math.abs(modeOf.get(l)! - r.modes[j]!)
        track('modeAbs', e)
        expect(e).toBeLessThan(1e-4)
      })
    })
  }
})

describe('quadrature', () => {
  it('Gauss–Hermite rules integrate normal moments exactly up to degree 2Q − 1', () => {
    for (const Q of [1, 2, 5, 12, 25, 60]) {
      const { nodes, weights } = normalRule(Q)
      const moment = (p: number): number => nodes.reduce((s, u, q) => s + weights[q]! * u ** p, 0)
      expect(moment(0)).toBeCloseTo(1, 12)
      if (2 * Q - 1 >= 2) expect(moment(2)).toBeCloseTo(1, 10)
      if (2 * Q - 1 >= 4) expect(moment(4)).toBeCloseTo(3, 9)
      if (2 * Q - 1 >= 6) expect(moment(6) / 15).toBeCloseTo(1, 9)
      expect(moment(3)).toBeCloseTo(0, 9)
    }
    expect(() => gaussHermite(0)).toThrow(/quadrature points/)
  })

  it('more points do not change the answer (12 vs 24, and the built-in check agrees)', () => {
    const c12 = cases[0]!
    const c24 = fitRandomIntercept(c12.design, 'probit', { quadPoints: 24 })
    const K = c12.design.k + 1
    for (let j = 0; j < K; j++) {
      const se = Math.sqrt(c12.fit.V![j * K + j]!)
      expect(Math.abs(c24.theta[j]! - c12.fit.theta[j]!) / se).toBeLessThan(1e-3)
    }
    const res = runModel(rowsOf(c12.design), { outcome: 'y', covariates: covs(c12.design), cluster: 'village', villageTreatment: 'random-intercept' })
    expect(res.randomIntercept!.quadratureCheck.stable).toBe(true)
    expect(res.randomIntercept!.quadratureCheck.maxChangeInSe).toBeLessThan(0.01)
  }, 120_000)

  it('with 2 points the check flags a change that 12 points do not have', () => {
    const c = cases[4]!
    const few = runModel(rowsOf(c.design), { outcome: 'y', covariates: covs(c.design), cluster: 'village', villageTreatment: 'random-intercept', quadPoints: 2 })
    const many = runModel(rowsOf(c.design), { outcome: 'y', covariates: covs(c.design), cluster: 'village', villageTreatment: 'random-intercept', quadPoints: 12 })
    expect(few.randomIntercept!.quadratureCheck.maxChangeInSe).toBeGreaterThan(many.randomIntercept!.quadratureCheck.maxChangeInSe)
  }, 120_000)
})

function rowsOf(d: Design): Array<Record<string, number | string>> {
  const rows: Array<Record<string, number | string>> = []
  for (let i = 0; i < d.n; i++) {
    const r: Record<string, number | string> = { y: d.y[i]!, village: `v${d.cluster![i]!}` }
    for (let j = 1; j < d.k; j++) r[`x${j}`] = d.X[i * d.k + j]!
    rows.push(r)
  }
  return rows
}
function covs(d: Design): Array<{ name: string }> {
  return Array.from({ length: d.k - 1 }, (_, j) => ({ name: `x${j + 1}` }))
}

describe('what the random intercept adds to the results', () => {
  const c = cases[1]!
  const res = runModel(rowsOf(c.design), { outcome: 'y', covariates: covs(c.design), cluster: 'village', villageTreatment: 'random-intercept', link: 'logit', bothMargins: true })

  it('reports σ, ρ = σ²/(σ² + π²/3) for the logit and the boundary LR test', () => {
    const ri = res.randomIntercept!
    const s = ri.sigma.estimate
    expect(relErr(s, ref[1]!.sigma)).toBeLessThan(1e-4)
    expect(ri.rho.estimate).toBeCloseTo(s * s / (s * s + Math.PI ** 2 / 3), 14)
    expect(ri.lrTest.statistic).toBeGreaterThan(10)
    expect(ri.lrTest.p).toBeLessThan(0.001)
    expect(ri.lrTest.reading).toMatch(/varies between villages/)
    expect(res.villageTreatment).toBe('random-intercept')
  })

  it('gives one prediction and one predicted effect per village, shrunk toward zero', () => {
    expect(res.villages!.length).toBe(c.fit.layout.G)
    for (const v of res.villages!) {
      expect(v.estimate).toBeGreaterThan(0)
      expect(v.estimate).toBeLessThan(1)
      expect(v.ciLow!).toBeLessThanOrEqual(v.estimate)
    }
    const effects = res.randomIntercept!.villageEffects
    const sdOfMeans = Math.sqrt(effects.reduce((s, e) => s + e.mean * e.mean, 0) / effects.length)
    expect(sdOfMeans).toBeLessThan(res.randomIntercept!.sigma.estimate)
    expect(sdOfMeans).toBeGreaterThan(0.3 * res.randomIntercept!.sigma.estimate)
  })

  it('averages marginal effects over the village effect (probit closed form = quadrature)', () => {
    const pc = cases[0]!
    const sigma = pc.fit.theta[pc.design.k]!
    const closed = populationAveragedLink('probit', sigma)
    const { nodes, weights } = normalRule(40)
    for (const t of [-2, -0.3, 0.7, 1.9]) {
      const byQuad = nodes.reduce((s, u, q) => s + weights[q]! * Math.exp(-0.5 * (t + sigma * u) ** 2) / Math.sqrt(2 * Math.PI), 0)
      expect(closed.pdf(t)).toBeCloseTo(byQuad, 12)
    }
    const m = randomInterceptMargins(pc.design, pc.fit)
    // x1's effect: β₁/√(1+σ²) · mean φ(η/√(1+σ²)), smaller than the conditional effect at u = 0.
    expect(m.effects[0]!.se).not.toBeNull()
    expect(Math.abs(m.effects[0]!.estimate)).toBeLessThan(Math.abs(pc.fit.theta[1]!) * 0.4)
  }, 60_000)

  it('is plain JSON', () => {
    const copy = JSON.parse(JSON.stringify(res))
    expect(copy.randomIntercept.villageEffects.length).toBe(res.randomIntercept!.villageEffects.length)
    expect({ ...copy, timings: null }).toEqual({ ...res, timings: null })
  })

  it('refuses weights and other links with a clear message', () => {
    const rows = rowsOf(c.design).map(r => ({ ...r, w: 2 }))
    expect(() => runModel(rows, { outcome: 'y', covariates: covs(c.design), cluster: 'village', weights: 'w', villageTreatment: 'random-intercept' })).toThrow(/survey design/)
    expect(() => runModel(rows, { outcome: 'y', covariates: covs(c.design), cluster: 'village', villageTreatment: 'random-intercept', link: 'cloglog' })).toThrow(/probit and logit/)
  }, 60_000)
})
