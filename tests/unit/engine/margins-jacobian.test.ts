// The AME's delta-method Jacobian ∂m/∂b' checked against central finite differences of the AME itself, for a design
// that mixes covariates summed in closed form (plain and centred numeric) with those summed row by row (a log, a
// square, an interaction, a yes/no), with and without weights: both paths of accumulateRange must agree with the
// derivative of the numbers they report.
import { describe, expect, it } from 'vitest'
import { buildDesign, getLink, marginValues, type ModelSpec } from '../../../shared/utils/stats'

function data(n: number, weighted: boolean) {
  let s = 7
  const u = () => {
    s = (s * 48271) % 2147483647
    return s / 2147483647
  }
  const cols: Record<string, Float64Array> = { a: new Float64Array(n), c: new Float64Array(n), l: new Float64Array(n), q: new Float64Array(n), z: new Float64Array(n), d: new Float64Array(n), y: new Float64Array(n), w: new Float64Array(n) }
  for (let i = 0; i < n; i++) {
    cols.a![i] = u() * 2 - 1
    cols.c![i] = u() * 4
    cols.l![i] = 0.5 + u() * 3
    cols.q![i] = u() - 0.5
    cols.z![i] = u()
    cols.d![i] = u() < 0.4 ? 1 : 0
    cols.y![i] = u() < 0.3 + 0.3 * cols.z![i]! ? 1 : 0
    cols.w![i] = weighted ? 0.5 + u() : 1
  }
  return cols
}

const spec = (weighted: boolean, link: 'probit' | 'logit'): ModelSpec => ({
  outcome: 'y',
  link,
  covariates: [
    { name: 'a', type: 'numeric' },
    { name: 'c', type: 'numeric', transform: 'centre' },
    { name: 'l', type: 'numeric', transform: 'log' },
    { name: 'q', type: 'numeric', square: true },
    { name: 'z', type: 'numeric' },
    { name: 'd', type: 'yesno' }
  ],
  interactions: [['z', 'd']],
  ...(weighted ? { weights: 'w' } : {})
})

describe('AME Jacobian', () => {
  for (const weighted of [false, true]) {
    for (const linkName of ['probit', 'logit'] as const) {
      it(`matches finite differences (${linkName}, ${weighted ? 'weighted' : 'unweighted'})`, () => {
        const design = buildDesign(data(4000, weighted), spec(weighted, linkName))
        const link = getLink(linkName)
        const b = Float64Array.from({ length: design.k }, (_, j) => 0.3 * Math.sin(j + 1))
        const { effects, values, jac } = marginValues(design, link, b)
        expect(effects.length).toBe(6)
        const h = 1e-6
        for (let j = 0; j < design.k; j++) {
          const up = Float64Array.from(b)
          const down = Float64Array.from(b)
          up[j]! += h
          down[j]! -= h
          const vu = marginValues(design, link, up).values
          const vd = marginValues(design, link, down).values
          for (let e = 0; e < effects.length; e++) {
            const numeric = (vu[e]! - vd[e]!) / (2 * h)
            expect(Math.abs(jac[e]![j]! - numeric)).toBeLessThan(1e-7 * Math.max(1, Math.abs(numeric)))
          }
        }
        expect(values.every(Number.isFinite)).toBe(true)
      })
    }
  }
})
