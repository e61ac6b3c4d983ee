/**
 * Survey design (strata, PSUs, probability weights, optional fpc) against R's
 * survey::svyglm(family = quasibinomial(link = "probit" | "logit")) from Debian's
 * r-cran-survey, run by this test through tests/reference/svyglm_ref.R, on generated
 * designs and on survey's published `apistrat` sample (tests/fixtures/reference/README.md).
 * svyglm's bread is the expected information from its IRLS fit: for the logit it equals
 * the observed one (our default), for the probit the test uses bread 'expected'.
 * Fails (does not skip) when R or survey is missing.
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import {
  buildDesign, fitBinary, readSurveyColumns, runModel, surveyCovariance,
  type Design, type FitResult, type LinkName, type ModelResults, type SurveyCovariance
} from '../../../shared/utils/stats/index'
import { normal, prng } from '../../../shared/utils/random/prng'
import { FIXTURES, readCsv, relErr } from './helpers'

const script = fileURLToPath(new URL('../../reference/svyglm_ref.R', import.meta.url))

interface Case {
  id: string
  link: LinkName
  rows: Array<Record<string, string | number>>
  strata: boolean
  psu: boolean
  fpc: boolean
  design: Design
  fit: FitResult
  cov: SurveyCovariance
  results: ModelResults
}

function makeCase(id: string, link: LinkName, rows: Array<Record<string, string | number>>, covariates: string[], opts: { strata: boolean, psu: boolean, fpc: boolean }, outcome = 'y'): Case {
  const spec = {
    outcome, covariates: covariates.map(name => ({ name })), link, weights: 'w',
    cluster: opts.psu ? 'village' : undefined, strata: opts.strata ? 'district' : undefined, fpc: opts.fpc ? 'fpc' : undefined
  }
  const design = buildDesign(rows, spec)
  const fit = fitBinary(design, link)
  const cov = surveyCovariance(design, fit, readSurveyColumns(rows, design, spec.strata, spec.fpc), link === 'probit' ? 'expected' : 'observed')
  const results = runModel(rows, { ...spec, villageTreatment: 'survey' })
  return { id, link, rows, ...opts, design, fit, cov, results }
}

function generated(seed: number, link: LinkName, opts: { strata: boolean, psu: boolean, fpc: boolean }): Case {
  const u = prng(seed)
  const H = 4
  const perStratum = 6 + (seed % 5)
  const rows: Array<Record<string, string | number>> = []
  for (let h = 0; h < H; h++) {
    for (let v = 0; v < perStratum; v++) {
      const re = 0.5 * normal(u)
      const m = 8 + Math.floor(u() * 15)
      const w = (1 + h) * (5 + 10 * u())
      for (let i = 0; i < m; i++) {
        const x1 = normal(u) + 0.5 * h
        const x2 = u() < 0.3 ? 1 : 0
        const eta = -0.5 + 0.6 * x1 - 0.4 * x2 + re + 0.2 * h
        const e = link === 'probit' ? normal(u) : Math.log(1 / u() - 1)
        // Village labels repeat across districts: PSUs are nested in strata.
        rows.push({ y: eta + e > 0 ? 1 : 0, x1, x2, w, village: `v${v}`, district: `d${h}`, fpc: perStratum * (3 + h) })
      }
    }
  }
  return makeCase(`gen${seed}`, link, rows, ['x1', 'x2'], opts)
}

function apistrat(link: LinkName, fpc: boolean): Case {
  const raw = readCsv(join(FIXTURES, 'reference', 'api-strat.csv'))
  const rows = raw.map(r => ({ ...r, y: Number(r.sch_wide), w: Number(r.pw), district: r.stype!, fpc: Number(r.fpc) }))
  return makeCase(`apistrat-${link}${fpc ? '-fpc' : ''}`, link, rows as Array<Record<string, string | number>>, ['ell', 'meals', 'mobility'], { strata: true, psu: false, fpc })
}

const cases: Case[] = [
  generated(1, 'probit', { strata: false, psu: true, fpc: false }),
  generated(2, 'logit', { strata: false, psu: true, fpc: false }),
  generated(3, 'probit', { strata: true, psu: true, fpc: false }),
  generated(4, 'logit', { strata: true, psu: true, fpc: false }),
  generated(5, 'probit', { strata: true, psu: true, fpc: true }),
  generated(6, 'logit', { strata: true, psu: true, fpc: true }),
  generated(7, 'logit', { strata: false, psu: false, fpc: false }),
  apistrat('logit', true),
  apistrat('probit', false),
  singleton(8, 'probit'),
  singleton(9, 'logit')
]

/** A stratum with one sampled village: its total about the grand mean (survey.lonely.psu = "adjust" in R). */
function singleton(seed: number, link: LinkName): Case {
  const base = generated(seed, link, { strata: true, psu: true, fpc: true })
  const rows = base.rows.filter(r => r.district !== 'd1' || r.village === 'v0')
  return makeCase(`gen${seed}-lonely`, link, rows, ['x1', 'x2'], { strata: true, psu: true, fpc: true })
}

interface Ref { id: string, coef: number[], se: number[], df: number }
let ref: Ref[] = []
const worst: Record<string, number> = {}
const track = (name: string, e: number): void => {
  worst[name] = Math.max(worst[name] ?? 0, e)
}

beforeAll(() => {
  const probe = spawnSync('Rscript', ['-e', 'suppressPackageStartupMessages({library(survey); library(jsonlite)})'], { encoding: 'utf8' })
  if (probe.status !== 0) throw new Error(`this test needs R with survey and jsonlite (Debian r-base-core, r-cran-survey, r-cran-jsonlite): ${probe.stderr || probe.error}`)
  const dir = mkdtempSync(join(tmpdir(), 'fc-svy-'))
  const input = cases.map((c) => {
    const d = c.design
    const pick = (name: string): Array<string | number> => Array.from(d.rowIndex, i => c.rows[i]![name]!)
    return {
      id: c.id, link: c.link, k: d.k, X: Array.from(d.X), y: Array.from(d.y), w: Array.from(d.w!),
      psu: c.psu ? pick('village') : null, strata: c.strata ? pick('district') : null, fpc: c.fpc ? pick('fpc') : null
    }
  })
  writeFileSync(join(dir, 'in.json'), JSON.stringify(input))
  const r = spawnSync('Rscript', [script, join(dir, 'in.json'), join(dir, 'out.json')], { encoding: 'utf8', maxBuffer: 1 << 26 })
  if (r.status !== 0) throw new Error(`svyglm reference script failed: ${r.stderr}`)
  ref = JSON.parse(readFileSync(join(dir, 'out.json'), 'utf8'))
}, 300_000)

afterAll(() => {
  console.log('largest relative deviations from survey::svyglm:', JSON.stringify(worst))
})

describe('survey design vs survey::svyglm (linearisation)', () => {
  for (const [idx, c] of cases.entries()) {
    it(`${c.id}: ${c.link}${c.strata ? ', strata' : ''}${c.psu ? ', PSUs' : ', one farm per PSU'}${c.fpc ? ', fpc' : ''}`, () => {
      const r = ref[idx]!
      const k = c.design.k
      expect(c.fit.converged).toBe(true)
      for (let j = 0; j < k; j++) {
        const e = relErr(c.fit.coef[j]!, r.coef[j]!, 1e-3)
        track('coef', e)
        expect(e).toBeLessThan(1e-6)
        const es = relErr(Math.sqrt(c.cov.V![j * k + j]!), r.se[j]!)
        track('se', es)
        expect(es).toBeLessThan(1e-5)
      }
      expect(c.cov.df).toBe(r.df)
      expect(c.results.survey!.df).toBe(r.df)
      if (c.link === 'logit') {
        // The default (observed-information) bread is what runModel reports.
        c.results.coefficients.forEach((row, j) => expect(relErr(row.se!, r.se[j]!)).toBeLessThan(1e-5))
      }
    })
  }
})

describe('survey design in the results', () => {
  const c = cases[4]!
  it('uses t on PSUs − strata for intervals and reports a design Wald test', () => {
    const s = c.results.survey!
    expect(s.df).toBe(s.psuCount - s.strataCount)
    const row = c.results.coefficients[1]!
    // Wider than a normal interval: the t quantile on few df exceeds 1.96.
    expect((row.ciHigh! - row.estimate) / row.se!).toBeGreaterThan(1.97)
    expect(s.wald.numDf).toBe(c.design.k - 1)
    expect(s.wald.p).toBeLessThan(0.01)
    // The fit summary's Wald test is the same design test, on the design's degrees of freedom.
    expect(c.results.fit.wald!.df2).toBe(s.df)
    expect(relErr(c.results.fit.wald!.statistic, s.wald.statistic)).toBeLessThan(1e-12)
    expect(s.note).toMatch(/not valid/)
    expect(c.results.covariance.type).toBe('survey')
  })

  it('gives the same SEs whatever the scale of the weights', () => {
    const scaled = c.rows.map(r => ({ ...r, w: Number(r.w) * 100 }))
    const again = runModel(scaled, { outcome: 'y', covariates: [{ name: 'x1' }, { name: 'x2' }], weights: 'w', cluster: 'village', strata: 'district', fpc: 'fpc', villageTreatment: 'survey' })
    again.coefficients.forEach((row, j) => expect(relErr(row.se!, c.results.coefficients[j]!.se!)).toBeLessThan(1e-9))
  }, 60_000)

  it('says which stratum has one sampled village, and refuses a survey without weights', () => {
    const lonely = cases.find(x => x.id === 'gen8-lonely')!.results
    const w = lonely.warnings.find(x => x.code === 'singleton_stratum')!
    expect(w.message).toMatch(/stratum d1 has only one sampled village/)
    expect(w.variables).toEqual(['d1'])
    expect(c.results.warnings.map(x => x.code)).not.toContain('singleton_stratum')
    expect(() => runModel(c.rows, { outcome: 'y', covariates: [{ name: 'x1' }], cluster: 'village', villageTreatment: 'survey' })).toThrow(/probability weights/)
  })
})
