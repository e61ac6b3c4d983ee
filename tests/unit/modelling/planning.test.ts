import jStat from 'jstat'
import { describe, expect, it } from 'vitest'
import { designEffect, intraClusterCorrelation, planForAdoptionRate, villagesForEffect } from '../../../shared/utils/modelling/planning'

function villagesFrom(groups: number[][]) {
  return groups.map(g => ({ n: g.length, observedRate: g.reduce((s, v) => s + v, 0) / g.length }))
}

describe('intra-cluster correlation', () => {
  it('equals (F − 1)/(F + n₀ − 1) with the one-way ANOVA F from jStat on the raw 0/1 outcomes', () => {
    // Unequal village sizes, clear between-village differences.
    let seed = 11
    const random = () => (seed = (seed * 16807) % 2147483647) / 2147483647
    const groups = [0.1, 0.3, 0.5, 0.7, 0.2, 0.9, 0.4].map((rate, j) =>
      Array.from({ length: 20 + 7 * j }, () => (random() < rate ? 1 : 0)))
    const N = groups.reduce((s, g) => s + g.length, 0)
    const n0 = (N - groups.reduce((s, g) => s + g.length ** 2, 0) / N) / (groups.length - 1)
    const F = jStat.anovafscore(...groups)
    const expected = (F - 1) / (F + n0 - 1)
    expect(intraClusterCorrelation(villagesFrom(groups))).toBeCloseTo(expected, 12)
  })

  it('is 0 when villages do not differ more than chance', () => {
    expect(intraClusterCorrelation(villagesFrom([[1, 0, 1, 0], [0, 1, 0, 1], [1, 1, 0, 0]]))).toBe(0)
  })
})

describe('sample sizes', () => {
  it('gives the familiar 385 farms for ±5 points at 50 % without clustering (common practice)', () => {
    const plan = planForAdoptionRate({ icc: 0, adoptionRate: 0.5, farmsPerVillage: 1, margin: 0.05 })
    expect(plan.farmsPerVillageForVillageRate).toBe(385)
    expect(plan.villagesForOverallRate).toBe(385)
  })

  it('multiplies by Kish\'s design effect 1 + (m − 1)·ICC', () => {
    expect(designEffect(21, 0.05)).toBeCloseTo(2, 12)
    const plan = planForAdoptionRate({ icc: 0.05, adoptionRate: 0.5, farmsPerVillage: 21, margin: 0.05 })
    expect(plan.designEffect).toBeCloseTo(2, 12)
    expect(plan.villagesForOverallRate).toBe(Math.ceil((1.959963984540054 ** 2 * 0.25 / 0.0025) * 2 / 21))
  })

  it('needs four times the villages to halve a marginal effect\'s standard error', () => {
    const villages = villagesForEffect({ icc: 0.1, currentSe: 0.04, currentVillages: 24, currentFarmsPerVillage: 60, farmsPerVillage: 60, targetSe: 0.02 })
    expect(villages).toBe(96)
  })

  it('refuses impossible targets', () => {
    expect(() => planForAdoptionRate({ icc: 0, adoptionRate: 0.5, farmsPerVillage: 10, margin: 0 })).toThrow(RangeError)
    expect(() => villagesForEffect({ icc: 0, currentSe: 0.1, currentVillages: 2, currentFarmsPerVillage: 2, farmsPerVillage: 2, targetSe: 0 })).toThrow(RangeError)
  })
})
