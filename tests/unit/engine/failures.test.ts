/** Named failure outcomes: thrown EngineInputError codes and returned warnings. */
import { describe, expect, it } from 'vitest'
import { buildDesign, EngineInputError, fitBinary, runModel, type ModelSpec } from '../../../shared/utils/stats/index'

function rows(n: number, f: (i: number) => Record<string, unknown>): Array<Record<string, unknown>> {
  return Array.from({ length: n }, (_, i) => f(i))
}
const noisy = (i: number): number => ((i * 7919) % 101) / 101 - 0.5

function code(fn: () => unknown): string {
  try {
    fn()
  }
  catch (e) {
    if (e instanceof EngineInputError) return e.code
    throw e
  }
  return 'no error'
}

const base = (i: number): Record<string, unknown> => ({ y: (i * 37) % 7 < 3 ? 1 : 0, x: noisy(i), z: ((i * 13) % 17) / 17 })
const spec: ModelSpec = { outcome: 'y', covariates: [{ name: 'x' }, { name: 'z' }] }

describe('failure cases', () => {
  it('complete separation is thrown, naming the covariate and direction', () => {
    const d = rows(60, i => ({ y: i < 30 ? 0 : 1, x: i, z: noisy(i) }))
    let err: EngineInputError | null = null
    try {
      runModel(d, spec)
    }
    catch (e) {
      err = e as EngineInputError
    }
    expect(err?.code).toBe('complete_separation')
    expect(err?.variables).toEqual(['x'])
    expect(err?.message).toContain('above 29')
  })

  it('quasi-complete separation is a warning naming the level', () => {
    const d = rows(200, (i) => {
      const clay = i % 5 === 0
      return { y: clay ? 1 : (i * 37) % 7 < 3 ? 1 : 0, x: noisy(i), soil: clay ? 'clay' : i % 2 ? 'loam' : 'sand' }
    })
    const res = runModel(d, { outcome: 'y', covariates: [{ name: 'x' }, { name: 'soil', type: 'categorical', reference: 'loam' }] })
    const w = res.warnings.find(x => x.code === 'quasi_complete_separation')
    expect(w?.variables).toEqual(['soil[clay]'])
    expect(w?.message).toContain('= 1 has y = 1')
  })

  it('exactly collinear columns: the later one is dropped, naming both', () => {
    const d = rows(100, i => ({ ...base(i), x2: 2 * noisy(i) + 3 }))
    const res = runModel(d, { outcome: 'y', covariates: [{ name: 'x' }, { name: 'z' }, { name: 'x2' }] })
    const w = res.warnings.find(x => x.code === 'collinear_column_dropped')!
    expect(w.variables).toEqual(['x2', '(Intercept)', 'x'])
    expect(res.coefficients.map(c => c.term)).toEqual(['(Intercept)', 'x', 'z'])
  })

  it('constant outcome, non-0/1 outcome, non-finite input, too few rows', () => {
    expect(code(() => buildDesign(rows(50, i => ({ ...base(i), y: 1 })), spec))).toBe('outcome_constant')
    expect(code(() => buildDesign(rows(50, i => ({ ...base(i), y: i % 3 })), spec))).toBe('outcome_not_binary')
    expect(code(() => buildDesign(rows(50, i => ({ ...base(i), x: i === 7 ? Infinity : 1 + noisy(i) })), spec))).toBe('non_finite_input')
    expect(code(() => buildDesign(rows(50, i => ({ ...base(i), x: i === 7 ? NaN : 1 + noisy(i) })), spec))).toBe('non_finite_input')
    expect(code(() => buildDesign(rows(3, i => ({ y: i % 2, x: i, z: i * i })), spec))).toBe('too_few_rows')
    expect(code(() => buildDesign(rows(50, base), { ...spec, covariates: [{ name: 'nope' }] }))).toBe('unknown_variable')
  })

  it('non-convergence at a tiny iteration cap returns the last iterate with converged = false', () => {
    const d = buildDesign(rows(500, base), spec)
    const one = fitBinary(d, 'probit', { maxIterations: 1 })
    const full = fitBinary(d, 'probit')
    expect(one.converged).toBe(false)
    expect(one.warnings.map(w => w.code)).toContain('not_converged')
    expect(one.iterations).toHaveLength(2)
    expect(one.loglik).toBeLessThan(full.loglik)
    expect(one.loglik).toBe(one.iterations[1]!.loglik)
    expect(full.converged).toBe(true)
  })

  it('missing values are dropped listwise and counted by variable', () => {
    const d = rows(100, i => ({ ...base(i), x: i % 10 === 0 ? null : noisy(i), z: i % 25 === 1 ? 'NA' : 0.5 + noisy(i * 3) }))
    const res = runModel(d, spec)
    expect(res.rows.dropped).toBe(14)
    expect(res.rows.byVariable).toEqual([{ variable: 'x', label: 'x', count: 10 }, { variable: 'z', label: 'z', count: 4 }])
    expect(res.fit.n).toBe(86)
  })
})
