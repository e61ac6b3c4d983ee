/** The CLI as a subprocess: JSON output on a reference data set, and the exit-2 cases. Each case starts tsx: generous timeouts for a loaded 2-core machine. */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { describe, expect, it } from 'vitest'
import { FIXTURES, relErr } from './helpers'

const root = fileURLToPath(new URL('../../..', import.meta.url))
const run = (...args: string[]) => spawnSync(process.execPath, ['--import', 'tsx', 'scripts/fit.ts', ...args], { cwd: root, encoding: 'utf8' })
const mroz = `${FIXTURES}reference/mroz.csv`
const ref = JSON.parse(readFileSync(`${FIXTURES}reference/reference-values.json`, 'utf8')).models
  .find((m: { id: string }) => m.id === 'mroz_probit')

describe('scripts/fit.ts', () => {
  it('prints the results object as JSON matching the Mroz (1987) probit reference (Wooldridge, Example 17.1)', () => {
    const r = run(mroz, '--outcome', 'inlf', '--covariates', 'nwifeinc,educ,exper,expersq,age,kidslt6,kidsge6', '--json')
    expect(r.status, r.stderr).toBe(0)
    const res = JSON.parse(r.stdout)
    // Reference values from statsmodels 0.13.5 (tests/fixtures/reference/reference-values.json).
    const educ = res.coefficients.find((c: { term: string }) => c.term === 'educ')
    expect(relErr(educ.estimate, ref.terms.educ.coef)).toBeLessThan(1e-6)
    expect(relErr(res.fit.loglik, ref.fit.loglik)).toBeLessThan(1e-6)
    expect(res.margins.kind).toBe('ame')
    expect(typeof res.timings.fitMs).toBe('number')
    expect(res.converged).toBe(true)
  }, 120_000)

  it('writes a text report with the caution line', () => {
    const r = run(mroz, '--outcome', 'inlf', '--covariates', 'educ,kidslt6', '--link', 'logit', '--se', 'robust')
    expect(r.status, r.stderr).toBe(0)
    expect(r.stdout).toContain('not causal effects')
    expect(r.stdout).toContain('logit')
  }, 120_000)

  it('exits with 2 and one stderr line for an unknown column, a non-binary outcome, and a bad file', () => {
    const dir = mkdtempSync(join(tmpdir(), 'fc-cli-'))
    const ragged = join(dir, 'ragged.csv')
    writeFileSync(ragged, 'a,b\n1,2\n3\n')
    const cases = [
      run(mroz, '--outcome', 'inlf', '--covariates', 'educ,nosuchcolumn'),
      run(mroz, '--outcome', 'hours', '--covariates', 'educ'),
      run(`${FIXTURES}reference/program-effectiveness.csv`, '--outcome', 'grade'),
      run(join(dir, 'missing.csv'), '--outcome', 'y'),
      run(ragged, '--outcome', 'a')
    ]
    for (const r of cases) {
      expect(r.status).toBe(2)
      expect(r.stderr.trim().split('\n')).toHaveLength(1)
    }
    expect(cases[0]!.stderr).toContain('nosuchcolumn')
    expect(cases[1]!.stderr).toContain('must be 0/1')
  }, 120_000)

  it('fits a village random intercept, a survey design and the checks from flags, all in --json', () => {
    const cbpp = `${FIXTURES}reference/cbpp-herds.csv`
    const ri = run(cbpp, '--outcome', 'y', '--categorical', 'period', '--random-intercept', 'herd', '--quad-points', '8', '--link', 'logit', '--json')
    expect(ri.status, ri.stderr).toBe(0)
    const a = JSON.parse(ri.stdout)
    expect(a.villageTreatment).toBe('random-intercept')
    expect(a.randomIntercept.quadPoints).toBe(8)
    expect(a.randomIntercept.lrTest.p).toBeLessThan(0.01)
    expect(a.villages).toHaveLength(15)
    const api = `${FIXTURES}reference/api-strat.csv`
    const sv = run(api, '--outcome', 'sch_wide', '--covariates', 'ell,meals', '--weights', 'pw', '--strata', 'stype', '--fpc', 'fpc', '--link-test', '--hetero', 'meals', '--json')
    expect(sv.status, sv.stderr).toBe(0)
    const b = JSON.parse(sv.stdout)
    expect(b.survey.df).toBe(197)
    expect(b.covariance.type).toBe('survey')
    expect(b.checks.linkTest.reading).toMatch(/squared index/)
    expect(b.checks.hetero.lrTest.df).toBe(1)
    const text = run(api, '--outcome', 'sch_wide', '--covariates', 'ell,meals', '--weights', 'pw', '--strata', 'stype')
    expect(text.stdout).toContain('design df')
    const bad = run(api, '--outcome', 'sch_wide', '--covariates', 'ell', '--strata', 'stype')
    expect(bad.status).toBe(2)
    expect(bad.stderr).toContain('--weights')
  }, 180_000)
})
