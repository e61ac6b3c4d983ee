/**
 * Scenarios for the village random-intercept model against direct numerical integration in R
 * (Debian r-base-core, stats::integrate) at the engine's estimates, through
 * tests/reference/ri_scenarios_ref.R: the overall change averaged over the village effect with
 * its delta-method SE, and each village's change with its predicted village effect (posterior
 * mean and SD). Fails (does not skip) when R is missing.
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import {
  buildDesign, fitRandomIntercept, randomInterceptScenario, runModel, scenarioMatrix,
  type LinkName, type ModelSpec, type ScenarioSpec
} from '../../../shared/utils/stats/index'
import { normal, prng } from '../../../shared/utils/random/prng'
import { relErr } from './helpers'

const script = fileURLToPath(new URL('../../reference/ri_scenarios_ref.R', import.meta.url))
type Row = Record<string, string | number>

function rowsFor(seed: number, link: LinkName, G: number, per: number, sd: number): Row[] {
  const u = prng(seed)
  const rows: Row[] = []
  for (let g = 0; g < G; g++) {
    const re = sd * normal(u)
    const m = Math.max(3, per + Math.floor((u() - 0.5) * per))
    for (let i = 0; i < m; i++) {
      const x1 = normal(u)
      const x2 = u() < 0.4 ? 'yes' : 'no'
      const eta = -0.3 + 0.5 * x1 + (x2 === 'yes' ? 0.6 : 0) + re
      const e = link === 'probit' ? normal(u) : Math.log(1 / u() - 1)
      rows.push({ y: eta + e > 0 ? 1 : 0, x1, x2, village: `v${String(g).padStart(2, '0')}` })
    }
  }
  return rows
}

const scenarios: ScenarioSpec[] = [
  { name: 'Every farm trained', covariate: 'x2', set: 'yes' },
  { name: 'Closer dealers in three villages', covariate: 'x1', shift: 1, villages: ['v01', 'v04', 'v07'] }
]
const cases = [
  { id: 'probit', link: 'probit' as LinkName, rows: rowsFor(21, 'probit', 30, 20, 0.7) },
  { id: 'logit', link: 'logit' as LinkName, rows: rowsFor(22, 'logit', 24, 15, 1.0) }
].flatMap(c => scenarios.map((sc, s) => ({ ...c, id: `${c.id}-${s}`, scenario: sc })))

function specOf(link: LinkName): ModelSpec {
  return { outcome: 'y', covariates: [{ name: 'x1' }, { name: 'x2', type: 'yesno' }], cluster: 'village', link, villageTreatment: 'random-intercept' }
}

const fitted = cases.map((c) => {
  const design = buildDesign(c.rows, specOf(c.link))
  const fit = fitRandomIntercept(design, c.link, { quadPoints: 12 })
  return { design, fit, result: randomInterceptScenario(design, fit, c.scenario), Xs: scenarioMatrix(design, c.scenario).Xs }
})

interface Ref { id: string, overall: { baseline: number, estimate: number, se: number }, villages: Array<{ village: number, baseline: number, estimate: number, se: number }> }
let ref: Ref[] = []
const worst: Record<string, number> = {}
const within = (name: string, e: number, tol: number): void => {
  worst[name] = Math.max(worst[name] ?? 0, e)
  expect(e).toBeLessThan(tol)
}

beforeAll(() => {
  const probe = spawnSync('Rscript', ['-e', 'suppressPackageStartupMessages(library(jsonlite))'], { encoding: 'utf8' })
  if (probe.status !== 0) throw new Error(`this test needs R with jsonlite (Debian r-base-core, r-cran-jsonlite): ${probe.stderr || probe.error}`)
  const dir = mkdtempSync(join(tmpdir(), 'fc-ris-'))
  const input = cases.map((c, idx) => {
    const { design, fit, Xs } = fitted[idx]!
    return {
      id: c.id, link: c.link, k: design.k, X: Array.from(design.X), Xs: Array.from(Xs), y: Array.from(design.y),
      g: Array.from(design.cluster!), theta: Array.from(fit.theta), V: Array.from(fit.V!)
    }
  })
  writeFileSync(join(dir, 'in.json'), JSON.stringify(input))
  const r = spawnSync('Rscript', [script, join(dir, 'in.json'), join(dir, 'out.json')], { encoding: 'utf8', maxBuffer: 1 << 26 })
  if (r.status !== 0) throw new Error(`random-intercept scenario reference script failed: ${r.stderr}`)
  ref = JSON.parse(readFileSync(join(dir, 'out.json'), 'utf8'))
}, 300_000)

afterAll(() => {
  console.log('largest deviations from R integrate() (random-intercept scenarios):', JSON.stringify(worst))
})

describe('random-intercept scenarios vs numerical integration in R', () => {
  for (const [idx, c] of cases.entries()) {
    it(`${c.id}: ${c.scenario.name}`, () => {
      const r = ref[idx]!
      const res = fitted[idx]!.result
      within('overall baseline (rel)', relErr(res.overall.baseline, r.overall.baseline), 1e-8)
      within('overall change (rel)', relErr(res.overall.estimate, r.overall.estimate), 1e-6)
      within('overall se (rel)', relErr(res.overall.se!, r.overall.se), 1e-4)
      const labels = fitted[idx]!.design.clusterLabels
      expect(res.villages.length).toBe(r.villages.length)
      for (const rv of r.villages) {
        const v = res.villages.find(x => x.village === labels[rv.village])!
        // Twelve adaptive quadrature points against an adaptive integral: absolute, in shares.
        within('village baseline (abs)', Math.abs(v.baseline - rv.baseline), 1e-5)
        within('village change (abs)', Math.abs(v.estimate - rv.estimate), 1e-5)
        within('village se (abs)', Math.abs(v.se! - rv.se), 1e-5)
      }
    })
  }
})

describe('random-intercept scenarios in the results', () => {
  it('are computed by runModel, start from the village predictions and leave other villages alone', () => {
    const c = cases[1]!
    const res = runModel(c.rows, { ...specOf(c.link), scenarios: [c.scenario] })
    expect(res.warnings.map(w => w.message).join(' ')).not.toMatch(/not yet computed/)
    const sc = res.scenarios[0]!
    expect(sc.rowsChanged).toBe(c.rows.filter(r => ['v01', 'v04', 'v07'].includes(String(r.village))).length)
    for (const v of sc.villages) {
      const pred = res.villages!.find(x => x.village === v.village)!
      expect(Math.abs(v.baseline - pred.estimate)).toBeLessThan(1e-12)
      if (!['v01', 'v04', 'v07'].includes(v.village)) expect(v.estimate).toBe(0)
      else expect(v.estimate).toBeGreaterThan(0)
    }
    expect(Math.abs(sc.overall.baseline - res.overall.estimate)).toBeLessThan(1e-12)
  })
})
