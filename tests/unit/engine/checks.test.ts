/**
 * Link test and heteroskedastic probit against a second implementation in R 4.2.2
 * (tests/reference/checks_ref.R): stats::glm for the link test, and for the
 * heteroskedastic probit a log-likelihood written afresh in that script, maximised by
 * stats::optim (BFGS) with standard errors from stats::optimHess.
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { buildDesign, fitBinary, fitHeteroProbit, linkTest, runModel, type Design, type LinkName } from '../../../shared/utils/stats/index'
import { normal, prng } from '../../../shared/utils/random/prng'
import { FIXTURES, readCsv, relErr } from './helpers'

const script = fileURLToPath(new URL('../../reference/checks_ref.R', import.meta.url))

interface Case { id: string, link: LinkName, design: Design, hetero: string[] }

function generated(seed: number, link: LinkName, n: number, heteroStrength: number): Case {
  const u = prng(seed)
  const rows = Array.from({ length: n }, () => {
    const x1 = normal(u)
    const x2 = Math.exp(0.4 * normal(u))
    const x3 = u() < 0.4 ? 1 : 0
    const sd = Math.exp(heteroStrength * x1)
    const e = link === 'probit' ? normal(u) : Math.log(1 / u() - 1)
    return { y: 0.2 + 0.8 * x1 - 0.5 * x2 + 0.4 * x3 + sd * e > 0 ? 1 : 0, x1, x2, x3 }
  })
  const design = buildDesign(rows, { outcome: 'y', covariates: [{ name: 'x1' }, { name: 'x2' }, { name: 'x3', type: 'yesno' }], link })
  return { id: `gen${seed}`, link, design, hetero: ['x1', 'x3'] }
}

function mroz(): Case {
  const rows = readCsv(join(FIXTURES, 'reference', 'mroz.csv'))
  const design = buildDesign(rows, {
    outcome: 'inlf', covariates: ['nwifeinc', 'educ', 'exper', 'age', 'kidslt6'].map(name => ({ name })), link: 'probit'
  })
  return { id: 'mroz', link: 'probit', design, hetero: ['kidslt6', 'educ'] }
}

const cases: Case[] = [generated(1, 'probit', 1500, 0.4), generated(2, 'probit', 800, 0), generated(3, 'logit', 1000, 0), mroz()]

interface Ref { id: string, linkTest: { coef: number[], se: number[] }, hetero?: { par: number[], se: number[], loglik: number, lr: number, convergence: number } }
let ref: Ref[] = []
const worst: Record<string, number> = {}
const track = (name: string, e: number): void => {
  worst[name] = Math.max(worst[name] ?? 0, e)
}

beforeAll(() => {
  const dir = mkdtempSync(join(tmpdir(), 'fc-checks-'))
  const input = cases.map((c) => {
    const d = c.design
    const cols = c.hetero.map(name => d.plan.terms.findIndex(t => t.name === name))
    const Z: number[] = []
    for (let i = 0; i < d.n; i++) for (const j of cols) Z.push(d.X[i * d.k + j]!)
    return { id: c.id, link: c.link, k: d.k, m: cols.length, X: Array.from(d.X), Z, y: Array.from(d.y) }
  })
  writeFileSync(join(dir, 'in.json'), JSON.stringify(input))
  const r = spawnSync('Rscript', [script, join(dir, 'in.json'), join(dir, 'out.json')], { encoding: 'utf8', maxBuffer: 1 << 26 })
  if (r.status !== 0) throw new Error(`checks reference script failed (needs R with jsonlite): ${r.stderr || r.error}`)
  ref = JSON.parse(readFileSync(join(dir, 'out.json'), 'utf8'))
}, 120_000)

afterAll(() => {
  console.log('largest relative deviations from the R second implementations:', JSON.stringify(worst))
})

describe('link test vs stats::glm', () => {
  for (const [idx, c] of cases.entries()) {
    it(`${c.id} (${c.link})`, () => {
      const lt = linkTest(c.design, fitBinary(c.design, c.link))
      const r = ref[idx]!.linkTest
      const ours = [lt.index, lt.indexSquared]
      ours.forEach((e, j) => {
        track('linkTestCoef', relErr(e.estimate, r.coef[j + 1]!, 1e-2))
        expect(relErr(e.estimate, r.coef[j + 1]!, 1e-2)).toBeLessThan(1e-6)
        track('linkTestSe', relErr(e.se!, r.se[j + 1]!))
        expect(relErr(e.se!, r.se[j + 1]!)).toBeLessThan(1e-5)
      })
      expect(lt.reading.length).toBeGreaterThan(20)
    })
  }
})

describe('heteroskedastic probit vs an optim() MLE in R', () => {
  for (const [idx, c] of cases.entries()) {
    if (c.link !== 'probit') continue
    it(`${c.id}: variance on ${c.hetero.join(', ')}`, () => {
      const h = fitHeteroProbit(c.design, c.hetero)
      const r = ref[idx]!.hetero!
      expect(r.convergence).toBe(0)
      expect(h.converged).toBe(true)
      const all = [...h.coefficients, ...h.variance]
      all.forEach((row, j) => {
        track('heteroCoef', relErr(row.estimate, r.par[j]!, 1e-2))
        expect(relErr(row.estimate, r.par[j]!, 1e-2)).toBeLessThan(1e-4)
        track('heteroSe', relErr(row.se!, r.se[j]!))
        expect(relErr(row.se!, r.se[j]!)).toBeLessThan(1e-5)
      })
      track('heteroLoglik', relErr(h.loglik, r.loglik))
      expect(relErr(h.loglik, r.loglik)).toBeLessThan(1e-9)
      expect(Math.abs(h.lrTest.statistic - r.lr)).toBeLessThan(1e-5)
    })
  }

  it('detects heteroskedasticity that is there and not where it is not', () => {
    expect(fitHeteroProbit(cases[0]!.design, ['x1']).lrTest.p).toBeLessThan(0.01)
    const none = fitHeteroProbit(cases[1]!.design, ['x1'])
    expect(none.lrTest.p).toBeGreaterThan(0.05)
    expect(none.reading).toMatch(/No evidence/)
  })
})

describe('checks in the results object', () => {
  it('runModel returns the link test and the heteroskedasticity test when asked', () => {
    const d = cases[0]!.design
    const rows = Array.from({ length: d.n }, (_, i) => ({ y: d.y[i]!, x1: d.X[i * d.k + 1]!, x2: d.X[i * d.k + 2]!, x3: d.X[i * d.k + 3]! }))
    const res = runModel(rows, { outcome: 'y', covariates: [{ name: 'x1' }, { name: 'x2' }, { name: 'x3', type: 'yesno' }], checks: { linkTest: true, hetero: ['x1'] } })
    expect(res.checks!.linkTest!.indexSquared.se).not.toBeNull()
    expect(res.checks!.hetero!.lrTest.df).toBe(1)
    expect(res.checks!.hetero!.reading).toMatch(/variance changes with x1/)
    expect(() => runModel(rows, { outcome: 'y', covariates: [{ name: 'x1' }], link: 'logit', checks: { hetero: ['x1'] } })).toThrow(/probit/)
  }, 60_000)
})
