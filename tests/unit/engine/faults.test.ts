/**
 * Regression tests for engine faults found by an outside check, each against statsmodels
 * (Debian's python3-statsmodels, run as a subprocess on the same numbers).
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { beforeAll, describe, expect, it } from 'vitest'
import { buildDesign, evaluate, fitBinary, fSf, getLink, runModel } from '../../../shared/utils/stats/index'
import { normal, prng } from '../../../shared/utils/random/prng'
import { relErr } from './helpers'

const PY = '/usr/bin/python3'
// statsmodels Probit by Newton with tight tolerances: the outside reference for these checks.
const SCRIPT = `
import json, sys
import numpy as np
import statsmodels.api as sm
out = []
for case in json.load(open(sys.argv[1])):
    X = sm.add_constant(np.array(case["X"], dtype=float), has_constant="add")
    res = sm.Probit(np.array(case["y"], dtype=float), X).fit(method="newton", disp=0, tol=1e-14, maxiter=100)
    out.append({"params": [float(v) for v in res.params], "llf": float(res.llf), "bse": [float(v) for v in res.bse]})
json.dump(out, open(sys.argv[2], "w"))
`

/** `level` is subtracted (exactly) before statsmodels sees the data: its Newton fails on the raw date (NaN) from the
 * ill-conditioning; the probit likelihood, slopes and their SEs do not depend on a covariate's shift. */
interface Case { name: string, rows: Array<Record<string, number>>, covariates: string[], level: number }

function makeCase(name: string, n: number, seed: number, level: number, covariate: (u: () => number, i: number) => number): Case {
  const u = prng(seed)
  const rows = Array.from({ length: n }, (_, i) => {
    const z = normal(u)
    const v = covariate(u, i)
    return { v, z, raw: v }
  })
  // The outcome depends on the covariate's deviation from its mean, so its coefficient is real.
  const mean = rows.reduce((s, r) => s + r.v, 0) / n
  const sd = Math.sqrt(rows.reduce((s, r) => s + (r.v - mean) ** 2, 0) / n)
  return {
    name,
    level,
    covariates: ['v', 'z'],
    rows: rows.map(r => ({ y: 0.4 * (r.v - mean) / sd + 0.5 * r.z + normal(u) > 0 ? 1 : 0, v: r.v, z: r.z }))
  }
}

const cases: Case[] = [
  // An interview date coded yyyymmdd within one month: sd ≈ 9 beside a level of 2e7.
  makeCase('yyyymmdd date within a month', 2000, 11, 20260301, u => 20260301 + Math.floor(u() * 30)),
  makeCase('1e5 + N(0,1)', 2000, 12, 1e5, u => 1e5 + normal(u))
]
let ref: Array<{ params: number[], llf: number, bse: number[] }> = []

beforeAll(() => {
  const dir = mkdtempSync(join(tmpdir(), 'fc-faults-'))
  writeFileSync(join(dir, 'in.json'), JSON.stringify(cases.map(c => ({ X: c.rows.map(r => [r.v! - c.level, r.z!]), y: c.rows.map(r => r.y) }))))
  const r = spawnSync(PY, ['-c', SCRIPT, join(dir, 'in.json'), join(dir, 'out.json')], { encoding: 'utf8' })
  if (r.status !== 0) throw new Error(`statsmodels reference failed (Debian package python3-statsmodels): ${r.stderr || r.error}`)
  ref = JSON.parse(readFileSync(join(dir, 'out.json'), 'utf8'))
}, 120_000)

describe('collinearity test is scale-invariant (fault 1)', { timeout: 120_000 }, () => {
  for (const [idx, c] of cases.entries()) {
    it(`keeps a real covariate with a small spread beside its level: ${c.name}`, () => {
      const res = runModel(c.rows, { outcome: 'y', covariates: c.covariates.map(name => ({ name })) })
      expect(res.warnings.filter(w => w.code === 'collinear_column_dropped')).toEqual([])
      expect(res.coefficients.map(t => t.term)).toEqual(['(Intercept)', 'v', 'z'])
      expect(res.converged).toBe(true)
      // Reference: statsmodels Probit (Newton) on the same rows.
      expect(relErr(res.fit.loglik, ref[idx]!.llf)).toBeLessThan(1e-8)
      expect(relErr(res.coefficients[1]!.estimate, ref[idx]!.params[1]!)).toBeLessThan(1e-7)
      expect(relErr(res.coefficients[1]!.se!, ref[idx]!.bse[1]!)).toBeLessThan(1e-6)
      expect(Math.abs(res.coefficients[1]!.z!)).toBeGreaterThan(5)
    })
  }

  it('still drops a truly constant column and an exact combination with an offset level', () => {
    const rows = cases[1]!.rows.map(r => ({ ...r, c: 20260301, w: 2 * r.v - 7 * r.z + 3 }))
    const res = runModel(rows, { outcome: 'y', covariates: [{ name: 'v' }, { name: 'z' }, { name: 'c' }, { name: 'w' }] })
    const dropped = res.warnings.filter(w => w.code === 'collinear_column_dropped')
    expect(dropped.map(w => w.variables)).toEqual([['c', '(Intercept)'], ['w', '(Intercept)', 'v', 'z']])
    expect(res.coefficients.map(t => t.term)).toEqual(['(Intercept)', 'v', 'z'])
  })
})

describe('the fit returns the final Newton iterate (fault 5)', { timeout: 120_000 }, () => {
  it('no Newton step is left at the returned estimate, and ℓ, g, H belong to it', () => {
    const c = cases[1]!
    const design = buildDesign(c.rows.map(r => ({ ...r, v: r.v - 1e5 })), { outcome: 'y', covariates: [{ name: 'v' }, { name: 'z' }] })
    const fit = fitBinary(design, 'probit')
    const at = evaluate(design, getLink('probit'), fit.coef)
    expect(at.loglik).toBe(fit.loglik)
    expect(Array.from(at.gradient)).toEqual(Array.from(fit.gradient))
    // The step that would follow is at rounding level: the estimate is the final iterate.
    const g = at.gradient
    const maxG = Math.max(...Array.from(g, Math.abs))
    expect(maxG).toBeLessThan(1e-9)
    // statsmodels' Newton returns its final iterate too; agreement to 1e-9 relative (reference: statsmodels).
    expect(relErr(fit.coef[2]!, ref[1]!.params[2]!)).toBeLessThan(1e-9)
    expect(fit.iterations.at(-1)!.stepSize).toBe(0)
    expect(fit.iterations.at(-2)!.stepSize).toBe(1)
  })
})

describe('numeric text is decimal notation only (fault 3)', { timeout: 120_000 }, () => {
  it('refuses 0x1A, 0b11, 0o7, Infinity and NaN as numbers, and reads exponents', () => {
    const rows = (v: string) => Array.from({ length: 30 }, (_, i) => ({ y: i % 3 === 0 ? 1 : 0, x: i === 4 ? v : String((i * 7) % 11) }))
    for (const bad of ['0x1A', '0b11', '0o7', 'Infinity', 'NaN']) {
      expect(() => buildDesign(rows(bad), { outcome: 'y', covariates: [{ name: 'x' }] }), bad).toThrow(/row 5 that is not a decimal number/)
    }
    const d = buildDesign(rows('2.5e1'), { outcome: 'y', covariates: [{ name: 'x' }] })
    expect(d.X[4 * d.k + 1]).toBe(25)
  })
})

describe('fit statistics with sampling weights (fault 2)', { timeout: 120_000 }, () => {
  const u = prng(21)
  const rows = Array.from({ length: 3000 }, (_, i) => {
    const x = normal(u)
    const z = normal(u)
    return { y: 0.3 + 0.5 * x - 0.4 * z + normal(u) > 0 ? 1 : 0, x, z, w: 0.5 + 2 * u(), v: `V${i % 40}` }
  })
  const spec = { outcome: 'y', covariates: [{ name: 'x' }, { name: 'z' }], weights: 'w', cluster: 'v', se: 'cluster' as const }

  it('shows no scale-dependent likelihood figure, and a Wald test that does not move when the weights are scaled', () => {
    const a = runModel(rows, spec)
    const b = runModel(rows.map(r => ({ ...r, w: 100 * r.w })), spec)
    for (const res of [a, b]) {
      expect(res.fit.lrChi2).toBeNull()
      expect(res.fit.lrP).toBeNull()
      expect(res.fit.aic).toBeNull()
      expect(res.fit.bic).toBeNull()
      expect(res.fit.mcfaddenR2).toBeNull()
      expect(res.hosmerLemeshow).toBeNull()
      expect(res.fit.notAvailable).toMatch(/not available/)
    }
    // Coefficients and cluster SEs do not depend on the scale of the weights; neither does the Wald test.
    a.coefficients.forEach((c, j) => {
      expect(relErr(b.coefficients[j]!.estimate, c.estimate)).toBeLessThan(1e-10)
      expect(relErr(b.coefficients[j]!.se!, c.se!)).toBeLessThan(1e-10)
    })
    expect(a.fit.wald!.kind).toBe('F')
    expect(a.fit.wald!.df).toBe(2)
    expect(a.fit.wald!.df2).toBe(39)
    expect(relErr(b.fit.wald!.statistic, a.fit.wald!.statistic)).toBeLessThan(1e-10)
    // The LR test and AIC would have moved 100-fold: the reason they are withheld.
    const unweighted = runModel(rows, { ...spec, weights: undefined })
    expect(unweighted.fit.lrChi2).not.toBeNull()
    expect(unweighted.fit.wald!.kind).toBe('F')
  })

  it('the Wald F of one slope is z², and its p-value is the F(1, G − 1) tail (reference: scipy.stats.f.sf)', () => {
    const res = runModel(rows, { ...spec, covariates: [{ name: 'x' }] })
    const z = res.coefficients[1]!.z!
    expect(relErr(res.fit.wald!.statistic, z * z)).toBeLessThan(1e-10)
    const cases: Array<[number, number, number]> = [[res.fit.wald!.statistic, 1, 39], [2.5, 3, 12], [0.7, 5, 200], [4.1, 2, 10]]
    const r = spawnSync(PY, ['-c', 'import json,sys; from scipy import stats; print(json.dumps([float(stats.f.sf(f, a, b)) for f, a, b in json.loads(sys.argv[1])]))', JSON.stringify(cases)], { encoding: 'utf8' })
    expect(r.status, r.stderr).toBe(0)
    const ref = JSON.parse(r.stdout) as number[]
    cases.forEach(([f, d1, d2], i) => expect(relErr(fSf(f, d1, d2), ref[i]!), `${f} ${d1} ${d2}`).toBeLessThan(1e-9))
    expect(relErr(res.fit.wald!.p, ref[0]!)).toBeLessThan(1e-9)
  })
})
