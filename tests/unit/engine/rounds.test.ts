/**
 * Several rounds: round effects, the adoption transition table, and the farm random
 * intercept with farm means (correlated random effects). The random-intercept estimator
 * itself is checked against lme4 in random-intercept.test.ts; here the pieces around it.
 */
import { describe, expect, it } from 'vitest'
import { runModel, transitionTable, withFarmMeans } from '../../../shared/utils/stats/index'
import { normal, prng } from '../../../shared/utils/random/prng'

describe('transition table', () => {
  it('counts adoption and dis-adoption between consecutive rounds for farms seen in both', () => {
    const rows = [
      { farm: 'a', round: '1', y: 0 }, { farm: 'a', round: '2', y: 1 }, { farm: 'a', round: '10', y: 1 },
      { farm: 'b', round: '1', y: 1 }, { farm: 'b', round: '2', y: 0 },
      { farm: 'c', round: '1', y: 0 }, { farm: 'c', round: '2', y: 0 }, { farm: 'c', round: '10', y: 1 },
      { farm: 'd', round: '2', y: 1 }, { farm: 'd', round: '10', y: 0 },
      { farm: 'e', round: '10', y: 1 }
    ]
    const t = transitionTable(rows, 'y', 'round', 'farm')
    // Rounds sort numerically (1, 2, 10), not as text.
    expect(t.map(r => `${r.from}→${r.to}`)).toEqual(['1→2', '2→10'])
    expect(t[0]).toMatchObject({ farmsInBoth: 3, stayedNon: 1, adopted: 1, disAdopted: 1, stayedAdopter: 0, adoptionRate: 0.5, disAdoptionRate: 1 })
    expect(t[1]).toMatchObject({ farmsInBoth: 3, stayedNon: 0, adopted: 1, disAdopted: 1, stayedAdopter: 1 })
  })

  it('refuses a farm recorded twice in one round', () => {
    expect(() => transitionTable([{ f: 'a', r: 1, y: 1 }, { f: 'a', r: 1, y: 0 }], 'y', 'r', 'f')).toThrow(/appears twice/)
  })
})

function panel(seed: number): Array<Record<string, number | string>> {
  const u = prng(seed)
  const rows: Array<Record<string, number | string>> = []
  for (let f = 0; f < 300; f++) {
    const c = 0.8 * normal(u)
    const size = Math.exp(0.3 * normal(u))
    for (let r = 1; r <= 3; r++) {
      // The farm effect c is correlated with x: a plain random intercept is biased, CRE is not.
      const x = 0.7 * c + normal(u)
      const eta = -0.3 + 0.5 * x + 0.3 * (r - 1) + c
      rows.push({ farm: `f${f}`, round: r, x, size, y: eta + normal(u) > 0 ? 1 : 0 })
    }
  }
  return rows
}

describe('correlated random effects and round effects', () => {
  const rows = panel(7)
  const spec = { outcome: 'y', covariates: [{ name: 'x' }, { name: 'size' }], rounds: 'round', panelId: 'farm', villageTreatment: 'random-intercept' as const }
  const cre = runModel(rows, spec)

  it('adds farm means only for covariates that vary within farms, and round effects', () => {
    expect(cre.rounds!.farmMeans).toEqual(['x'])
    const terms = cre.coefficients.map(c => c.term)
    expect(terms).toEqual(['(Intercept)', 'x', 'size', 'round[2]', 'round[3]', 'x__farm_mean'])
    expect(cre.rounds!.transitions.length).toBe(2)
    expect(cre.villageTreatment).toBe('random-intercept')
  })

  it('recovers the within-farm effect that a plain random intercept overstates', () => {
    const plain = runModel(rows, { ...spec, panelId: undefined, cluster: 'farm' })
    const bx = (r: typeof cre): number => r.coefficients.find(c => c.term === 'x')!.estimate
    const se = cre.coefficients.find(c => c.term === 'x')!.se!
    expect(Math.abs(bx(cre) - 0.5)).toBeLessThan(3 * se)
    expect(bx(plain)).toBeGreaterThan(bx(cre))
    expect(cre.coefficients.find(c => c.term === 'round[3]')!.estimate).toBeGreaterThan(0.3)
  }, 60_000)

  it('computes farm means from the rows as given', () => {
    const { data } = withFarmMeans(rows.slice(0, 6), { outcome: 'y', covariates: [{ name: 'x' }] }, 'farm')
    const m = (Number(rows[0]!.x) + Number(rows[1]!.x) + Number(rows[2]!.x)) / 3
    expect(data['x__farm_mean']![0]).toBeCloseTo(m, 14)
    expect(data['x__farm_mean']![2]).toBeCloseTo(m, 14)
  })
})
