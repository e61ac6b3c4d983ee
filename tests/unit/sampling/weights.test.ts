import { describe, expect, it } from 'vitest'
import { responseRates, villageWeight } from '../../../shared/utils/sampling/weights'
import { farmStates, nextSpare } from '../../../shared/utils/sampling/farm-states'
import type { SampleFarmRow } from '../../../shared/types/sample'

// Hand-computed on a small two-stage example (worked out on paper, not by the code under test):
// village A: drawn with P = 0.5, N = 40 farms listed, n = 8 main-sample farms → π = 0.5 · 8/40 = 0.1 → weight 10
// village B: drawn with P = 0.2, N = 25 farms listed, n = 5 main-sample farms → π = 0.2 · 5/25 = 0.04 → weight 25
// village C: P = 1 (taken with certainty), N = 12, n = 12 (every farm) → π = 1 → weight 1
describe('villageWeight: inverse inclusion probability 1 / (P_v · n_v / N_v)', () => {
  it.each([
    ['A', 0.5, 40, 8, 10, 0.2, 0.1],
    ['B', 0.2, 25, 5, 25, 0.2, 0.04],
    ['C', 1, 12, 12, 1, 1, 1]
  ])('village %s', (village, p, listed, main, weight, within, inclusion) => {
    const w = villageWeight({ village, selectionProbability: p, listedFarms: listed, mainSample: main })
    expect(w.ok).toBe(true)
    if (!w.ok) return
    expect(w.weight).toBeCloseTo(weight, 12)
    expect(w.withinProbability).toBeCloseTo(within, 12)
    expect(w.inclusionProbability).toBeCloseTo(inclusion, 12)
  })

  it('sums to the population of the listed villages in expectation: weights × n_v = N_v / P_v', () => {
    const w = villageWeight({ village: 'A', selectionProbability: 0.5, listedFarms: 40, mainSample: 8 })
    expect(w.ok && w.weight * 8).toBeCloseTo(80, 12)
  })

  it('says why a weight cannot be computed, naming the village', () => {
    const problem = (d: Partial<Parameters<typeof villageWeight>[0]>) => {
      const w = villageWeight({ village: 'Kiruma', selectionProbability: 0.3, listedFarms: 30, mainSample: 6, ...d })
      return w.ok ? null : w.problem
    }
    expect(problem({ listedFarms: 0 })).toBe('The weight can\'t be computed for village Kiruma: the number of farms listed is 0.')
    expect(problem({ listedFarms: null })).toMatch(/can't be computed for village Kiruma: the number of farms listed is missing/)
    expect(problem({ selectionProbability: null })).toMatch(/can't be computed for village Kiruma: the probability that the village was drawn is missing/)
    expect(problem({ selectionProbability: 0 })).toMatch(/more than 0 and at most 1/)
    expect(problem({ mainSample: 0 })).toMatch(/no main-sample farm/)
    expect(problem({ mainSample: 31 })).toMatch(/main sample \(31 farms\) is larger than the 30 farms listed/)
    expect(problem({})).toBeNull()
  })
})

const row = (farmCode: string, rank: number, extra: Partial<SampleFarmRow> = {}): SampleFarmRow => ({
  farmCode, rank, headName: null, hint: null, lat: null, lon: null, outcome: null, outcomeNote: null, replacedBy: null, visited: false, ...extra
})

describe('responseRates', () => {
  it('counts interviews, non-interviews and replacements of one village', () => {
    const rates = responseRates([
      { rank: 0, outcome: null, visited: true },
      { rank: 0, outcome: null, visited: true },
      { rank: 0, outcome: 'refused', visited: false },
      { rank: 0, outcome: 'absent', visited: false },
      { rank: 0, outcome: null, visited: false },
      { rank: 1, outcome: null, visited: true },
      { rank: 2, outcome: null, visited: false }
    ])
    expect(rates).toEqual({ mainSample: 5, interviewed: 2, refused: 1, absent: 1, moved: 0, replacementsUsed: 1, responseRate: 0.4, completion: 0.6 })
  })
  it('a farm interviewed after a first refusal counts as interviewed', () => {
    expect(responseRates([{ rank: 0, outcome: 'refused', visited: true }])).toMatchObject({ interviewed: 1, refused: 0, responseRate: 1 })
  })
})

describe('farmStates on the tablet', () => {
  const list = [row('F-1', 0), row('F-2', 0), row('F-3', 0, { visited: true }), row('R-1', 1), row('R-2', 2), row('R-3', 3)]
  it('main farms are to visit, replacements wait until one replaces a farm', () => {
    const states = farmStates(list, new Set(), [])
    expect(states.map(s => s.kind)).toEqual(['to_visit', 'to_visit', 'visited', 'spare', 'spare', 'spare'])
    expect(nextSpare(states)?.farmCode).toBe('R-1')
  })
  it('a refusal recorded here brings in the next replacement by rank; a visit saved here counts as visited', () => {
    const states = farmStates(list, new Set(['f-2']), [{ farmCode: 'F-1', outcome: 'refused', note: 'Declined', replacedBy: 'R-1' }])
    expect(states.map(s => [s.farm.farmCode, s.kind, s.replacedBy, s.replaces, s.waiting])).toEqual([
      ['F-1', 'refused', 'R-1', null, true],
      ['F-2', 'visited', null, null, false],
      ['F-3', 'visited', null, null, false],
      ['R-1', 'to_visit', null, 'F-1', false],
      ['R-2', 'spare', null, null, false],
      ['R-3', 'spare', null, null, false]
    ])
    expect(nextSpare(states)?.farmCode).toBe('R-2')
  })
  it('the server\'s outcome shows when the tablet has none; a refused local outcome is ignored', () => {
    const fromServer = [row('F-1', 0, { outcome: 'moved', replacedBy: 'R-2' }), row('R-1', 1), row('R-2', 2)]
    const states = farmStates(fromServer, new Set(), [{ farmCode: 'R-1', outcome: 'absent', note: 'x', error: 'not on the list' }])
    expect(states.map(s => s.kind)).toEqual(['moved', 'spare', 'to_visit'])
  })
})
