/** The CLI as a subprocess: JSON output on a reference data set, and the exit-2 cases. Each case starts tsx: generous timeouts for a loaded 2-core machine. */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { describe, expect, it } from 'vitest'
import { FIXTURES, relErr } from './helpers'

const root = fileURLToPath(new URL('../../..', import.meta.url))
// `npm run fit` runs scripts/fit.mjs (the CLI bundled once, then plain node).
const run = (...args: string[]) => spawnSync(process.execPath, ['scripts/fit.mjs', ...args], { cwd: root, encoding: 'utf8' })
const mroz = `${FIXTURES}reference/mroz.csv`
const ref = JSON.parse(readFileSync(`${FIXTURES}reference/reference-values.json`, 'utf8')).models
  .find((m: { id: string }) => m.id === 'mroz_probit')

// Subprocesses on a shared, loaded machine: generous time.
describe('scripts/fit.ts', { timeout: 120_000 }, () => {
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
  })

  it('refuses a header naming a column twice, and a numeric cell not in decimal notation, naming the line', () => {
    const dir = mkdtempSync(join(tmpdir(), 'fc-cli-'))
    const body = Array.from({ length: 40 }, (_, i) => `${i % 3 === 0 ? 1 : 0},${(i * 7) % 11},${(i * 5) % 13}`)
    writeFileSync(join(dir, 'dup.csv'), ['y,x,x', ...body].join('\n'))
    const dup = run(join(dir, 'dup.csv'), '--outcome', 'y', '--covariates', 'x')
    expect(dup.status).toBe(2)
    expect(dup.stderr).toContain('names column \'x\' twice (columns 2 and 3)')
    for (const bad of ['0x1A', '0b11', 'Infinity', 'NaN', '1_000']) {
      const rows = body.slice()
      rows[4] = `1,${bad},3`
      writeFileSync(join(dir, 'bad.csv'), ['y,x,z', ...rows].join('\n'))
      const r = run(join(dir, 'bad.csv'), '--outcome', 'y')
      expect(r.status, bad).toBe(2)
      expect(r.stderr.trim().split('\n')).toHaveLength(1)
      expect(r.stderr).toContain(`column 'x', line 6: '${bad}' is not a decimal number`)
    }
    // Exponents are decimal notation (1e0 = 1): the same fit as with the plain digits.
    const plain = body.slice()
    plain[4] = '1,1,3'
    const withExp = body.slice()
    withExp[4] = '1,1e0,3'
    writeFileSync(join(dir, 'plain.csv'), ['y,x,z', ...plain].join('\n'))
    writeFileSync(join(dir, 'exp.csv'), ['y,x,z', ...withExp].join('\n'))
    const a = JSON.parse(run(join(dir, 'plain.csv'), '--outcome', 'y', '--json').stdout)
    const b = JSON.parse(run(join(dir, 'exp.csv'), '--outcome', 'y', '--json').stdout)
    expect(b.coefficients).toEqual(a.coefficients)
  })

  it('detects a semicolon-separated file, reads decimal commas when told, and says which separator it used', () => {
    const dir = mkdtempSync(join(tmpdir(), 'fc-cli-'))
    const src = readFileSync(mroz, 'utf8').trim().split('\n')
    const head = src[0]!.split(',').map(h => h.replace(/"/g, ''))
    const cols = ['inlf', 'educ', 'kidslt6'].map(c => head.indexOf(c))
    const pick = (line: string) => cols.map(j => line.split(',')[j]!)
    writeFileSync(join(dir, 'comma.csv'), src.map(l => pick(l).join(',')).join('\n'))
    writeFileSync(join(dir, 'semi.csv'), src.map(l => pick(l).join(';')).join('\n'))
    // Decimal commas in a numeric column: educ as 12,0 etc.
    writeFileSync(join(dir, 'semi-comma.csv'), src.map((l, i) => {
      const p = pick(l)
      if (i > 0) p[1] = `${p[1]},0`
      return p.join(';')
    }).join('\n'))
    const comma = run(join(dir, 'comma.csv'), '--outcome', 'inlf', '--json')
    const semi = run(join(dir, 'semi.csv'), '--outcome', 'inlf', '--json')
    expect(semi.status, semi.stderr).toBe(0)
    expect(JSON.parse(semi.stdout).coefficients).toEqual(JSON.parse(comma.stdout).coefficients)
    expect(run(join(dir, 'semi.csv'), '--outcome', 'inlf').stdout).toContain('columns separated by semicolon')
    const noDecimal = run(join(dir, 'semi-comma.csv'), '--outcome', 'inlf')
    expect(noDecimal.status).toBe(2)
    expect(noDecimal.stderr).toContain('pass --decimal ,')
    const decimal = run(join(dir, 'semi-comma.csv'), '--outcome', 'inlf', '--decimal', ',', '--json')
    expect(decimal.status, decimal.stderr).toBe(0)
    expect(JSON.parse(decimal.stdout).coefficients).toEqual(JSON.parse(comma.stdout).coefficients)
  })

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
