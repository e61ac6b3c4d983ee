import { describe, expect, it } from 'vitest'
import { hiddenVillages, shownMean } from '../../shared/utils/suppression'

const v = (village: string, n: number) => ({ village, n })

describe('suppression of small villages', () => {
  it('hides nothing when every village reaches the minimum', () => {
    expect([...hiddenVillages([v('A', 9), v('B', 12)], 9)]).toEqual([])
  })

  it('hides a second village when only one is below the minimum: the smallest shown one', () => {
    expect([...hiddenVillages([v('A', 8), v('B', 30), v('C', 10), v('D', 11)], 9)].sort()).toEqual(['A', 'C'])
  })

  it('keeps hiding the smallest villages until the hidden group holds the minimum number of visits', () => {
    // 2 + 3 = 5 < 9: the next smallest (C, 10) joins, and the group then holds 15.
    expect([...hiddenVillages([v('A', 2), v('B', 3), v('C', 10), v('D', 40), v('E', 11)], 9)].sort()).toEqual(['A', 'B', 'C'])
  })

  it('breaks ties by village code, so the same villages are hidden on every read', () => {
    expect([...hiddenVillages([v('Z', 20), v('A', 1), v('M', 20), v('B', 20)], 5)].sort()).toEqual(['A', 'B'])
  })

  it('hides every village when no group of two can be formed', () => {
    expect([...hiddenVillages([v('A', 3), v('B', 2)], 9)].sort()).toEqual(['A', 'B'])
    expect([...hiddenVillages([v('A', 3)], 9)]).toEqual(['A'])
  })

  it('averages shown figures by visits, and gives null when nothing is shown', () => {
    expect(shownMean([{ n: 10, value: 0.5 }, { n: 30, value: 0.1 }])).toBeCloseTo(0.2, 12)
    expect(shownMean([])).toBeNull()
  })
})
