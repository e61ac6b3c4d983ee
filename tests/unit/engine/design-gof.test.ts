/**
 * Design-adjusted goodness of fit (Archer & Lemeshow 2006) against R's survey package from Debian's
 * r-cran-survey, run by this test through tests/reference/design_gof_ref.R: svyglm for the model,
 * svyglm(r ~ 0 + group) for the groups' mean residuals and their linearisation SEs, regTermTest
 * (Wald) for the statistic. Generated designs (strata, PSUs, fpc; probit and logit; one
 * deliberately misspecified) and survey's published `apistrat` sample
 * (tests/fixtures/reference/README.md). Fails (does not skip) when R or survey is missing.
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { buildDesign, runModel, type LinkName, type ModelResults, type ModelSpec } from '../../../shared/utils/stats/index'
import { normal, prng } from '../../../shared/utils/random/prng'
import { FIXTURES, readCsv, relErr } from './helpers'

const script = fileURLToPath(new URL('../../reference/design_gof_ref.R', import.meta.url))

type Row = Record<string, string | number>
interface Case { id: string, rows: Row[], spec: ModelSpec, results: ModelResults, psu: string | null, strata: string | null, fpc: string | null }

function makeCase(id: string, rows: Row[], spec: ModelSpec): Case {
  const survey = spec.villageTreatment === 'survey'
  return {
    id, rows, spec, results: runModel(rows, spec),
    psu: spec.cluster ?? null, strata: survey ? spec.strata ?? null : null, fpc: survey ? spec.fpc ?? null : null
  }
}

/** Villages in districts; with `curved`, adoption depends on x1² too, which the fitted model leaves out. */
function generated(seed: number, link: LinkName, opts: { strata: boolean, fpc: boolean, curved?: boolean, treatment?: 'survey' | 'cluster' }): Case {
  const u = prng(seed)
  const rows: Row[] = []
  const perStratum = 8 + (seed % 4)
  for (let h = 0; h < 4; h++) {
    for (let v = 0; v < perStratum; v++) {
      const re = 0.4 * normal(u)
      const m = 10 + Math.floor(u() * 20)
      const w = (1 + h) * (5 + 10 * u())
      for (let i = 0; i < m; i++) {
        const x1 = normal(u) + 0.3 * h
        const x2 = u() < 0.4 ? 1 : 0
        const eta = -0.3 + 0.7 * x1 - 0.5 * x2 + re + (opts.curved ? 0.8 * x1 * x1 - 0.8 : 0)
        const e = link === 'probit' ? normal(u) : Math.log(1 / u() - 1)
        rows.push({ y: eta + e > 0 ? 1 : 0, x1, x2, w, village: `d${h}v${v}`, district: `d${h}`, fpc: perStratum * (4 + h) })
      }
    }
  }
  const treatment = opts.treatment ?? 'survey'
  return makeCase(`gen${seed}-${link}${opts.curved ? '-curved' : ''}`, rows, {
    outcome: 'y', covariates: [{ name: 'x1' }, { name: 'x2' }], link, weights: 'w', cluster: 'village',
    villageTreatment: treatment,
    ...(treatment === 'survey' && opts.strata ? { strata: 'district' } : {}),
    ...(treatment === 'survey' && opts.fpc ? { fpc: 'fpc' } : {})
  })
}

function apistrat(link: LinkName): Case {
  const raw = readCsv(join(FIXTURES, 'reference', 'api-strat.csv'))
  const rows = raw.map(r => ({ ...r, y: Number(r.sch_wide), w: Number(r.pw), district: r.stype!, fpc: Number(r.fpc) })) as Row[]
  return makeCase(`apistrat-${link}`, rows, {
    outcome: 'y', covariates: [{ name: 'ell' }, { name: 'meals' }, { name: 'mobility' }], link, weights: 'w',
    villageTreatment: 'survey', strata: 'district', fpc: 'fpc'
  })
}

const cases: Case[] = [
  generated(11, 'logit', { strata: true, fpc: false }),
  generated(12, 'probit', { strata: true, fpc: true }),
  generated(13, 'probit', { strata: false, fpc: false }),
  generated(14, 'logit', { strata: true, fpc: false, curved: true }),
  generated(15, 'probit', { strata: false, fpc: false, treatment: 'cluster' }),
  apistrat('logit'),
  apistrat('probit'),
  lonely(generated(16, 'logit', { strata: true, fpc: true }))
]

/** District d1 keeps one sampled village: a stratum with one PSU (survey.lonely.psu = "adjust" in R). */
function lonely(c: Case): Case {
  return makeCase(`${c.id}-lonely`, c.rows.filter(r => r.district !== 'd1' || r.village === 'd1v0'), c.spec)
}

interface Ref { id: string, coef: number[], means: number[], se: number[], wald: number, F: number, numDf: number, denDf: number, p: number, df: number, sizes: number[] }
let ref: Ref[] = []
const worst: Record<string, number> = {}
const within = (name: string, e: number, tol: number): void => {
  worst[name] = Math.max(worst[name] ?? 0, e)
  expect(e).toBeLessThan(tol)
}
afterAll(() => {
  console.log('largest relative deviations from R survey (design goodness of fit):', JSON.stringify(worst))
})

beforeAll(() => {
  const probe = spawnSync('Rscript', ['-e', 'suppressPackageStartupMessages({library(survey); library(jsonlite)})'], { encoding: 'utf8' })
  if (probe.status !== 0) throw new Error(`this test needs R with survey and jsonlite (Debian r-base-core, r-cran-survey, r-cran-jsonlite): ${probe.stderr || probe.error}`)
  const dir = mkdtempSync(join(tmpdir(), 'fc-gof-'))
  const input = cases.map((c) => {
    const d = buildDesign(c.rows, c.spec)
    const pick = (name: string | null): Array<string | number> | null => name ? Array.from(d.rowIndex, i => c.rows[i]![name]!) : null
    return { id: c.id, link: c.spec.link, k: d.k, X: Array.from(d.X), y: Array.from(d.y), w: Array.from(d.w!), psu: pick(c.psu), strata: pick(c.strata), fpc: pick(c.fpc), groups: 10 }
  })
  writeFileSync(join(dir, 'in.json'), JSON.stringify(input))
  const r = spawnSync('Rscript', [script, join(dir, 'in.json'), join(dir, 'out.json')], { encoding: 'utf8', maxBuffer: 1 << 26 })
  if (r.status !== 0) throw new Error(`design goodness-of-fit reference script failed: ${r.stderr}`)
  ref = JSON.parse(readFileSync(join(dir, 'out.json'), 'utf8'))
}, 300_000)

describe('design-adjusted goodness of fit vs R survey (svyglm + regTermTest)', () => {
  for (const [idx, c] of cases.entries()) {
    it(`${c.id}: ${c.spec.villageTreatment}${c.strata ? ', strata' : ''}${c.fpc ? ', fpc' : ''}`, () => {
      const r = ref[idx]!
      const g = c.results.designGof!
      expect(c.results.hosmerLemeshow).toBeNull()
      expect(g.groups.map(x => x.n)).toEqual(r.sizes)
      g.groups.forEach((grp, l) => {
        within('mean residual', relErr(grp.meanResidual, r.means[l]!, 1e-3), 1e-5)
        within('se', relErr(grp.se, r.se[l]!), 1e-5)
      })
      expect(g.designDf).toBe(r.df)
      within('wald', relErr(g.wald!, r.wald), 1e-5)
      within('F', relErr(g.statistic!, r.F), 1e-5)
      expect(g.numDf).toBe(r.numDf)
      expect(g.denDf).toBe(r.denDf)
      within('p', relErr(g.p!, r.p, 1e-6), 1e-4)
    })
  }

  it('finds the left-out curve and passes the well-specified fits', () => {
    expect(cases[3]!.results.designGof!.p!).toBeLessThan(0.01)
    expect(cases[3]!.results.designGof!.reading).toMatch(/misses a pattern/)
    expect(cases[1]!.results.designGof!.p!).toBeGreaterThan(0.05)
  })

  it('does not change with the scale of the weights', () => {
    const c = cases[0]!
    const again = runModel(c.rows.map(r => ({ ...r, w: Number(r.w) * 100 })), c.spec)
    expect(relErr(again.designGof!.statistic!, c.results.designGof!.statistic!)).toBeLessThan(1e-8)
  })

  it('says so when the design has too few degrees of freedom', () => {
    const c = cases[2]!
    const few = c.rows.filter(r => ['d0v0', 'd0v1', 'd0v2', 'd0v3', 'd0v4', 'd0v5'].includes(String(r.village)))
    const res = runModel(few, c.spec)
    expect(res.designGof!.statistic).toBeNull()
    expect(res.designGof!.reading).toMatch(/Too few sampled villages.*the design has 5/)
  })
})
