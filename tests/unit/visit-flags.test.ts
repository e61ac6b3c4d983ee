import { describe, expect, it } from 'vitest'
import type { Question } from '../../shared/utils/schemas/questionnaire'
import { edgeValues, haversineKm, intrinsicFlags } from '../../server/utils/visit-flags'

const questions: Question[] = [
  { key: 'adopted', label: 'Adopted?', type: 'yesno', required: true },
  { key: 'farm_size_ha', label: 'Farm size', type: 'number', unit: 'ha', min: 0, max: 50, required: true },
  { key: 'age', label: 'Age', type: 'whole', min: 15, required: true }
]
const settings = { farRadiusKm: 5, minInterviewSeconds: 180 }
const village = { centreLat: 0.5, centreLon: 34.2 }

describe('quality flags', () => {
  it('measures great-circle distance (one degree of latitude is about 111.2 km)', () => {
    expect(haversineKm(0, 0, 1, 0)).toBeCloseTo(111.19, 1)
    expect(haversineKm(0.5, 34.2, 0.5, 34.2)).toBe(0)
    // Symmetric and handles the antimeridian.
    expect(haversineKm(0, 179.9, 0, -179.9)).toBeCloseTo(22.24, 1)
  })

  it.each([
    [0, []],
    [0.4, []],
    [0.6, []],
    [25, []],
    [49.6, ['farm_size_ha']],
    [50, ['farm_size_ha']]
  ])('farm size %s is at the edge: %j (only questions with both bounds count; a zero bound does not)', (value, expected) => {
    expect(edgeValues(questions, { farm_size_ha: value, age: 15 })).toEqual(expected)
  })

  it('flags the lower edge when the minimum is not zero', () => {
    const bounded: Question[] = [{ key: 'household_size', label: 'People', type: 'whole', min: 1, max: 40, required: true }]
    expect(edgeValues(bounded, { household_size: 1 })).toEqual(['household_size'])
    expect(edgeValues(bounded, { household_size: 2 })).toEqual([])
  })

  it('flags a point beyond the radius, a fast interview, and nothing for a normal visit', () => {
    const base = { startedAt: '2026-11-20T08:00:00Z', savedAt: '2026-11-20T08:20:00Z', answers: { farm_size_ha: 3 } }
    expect(intrinsicFlags({ ...base, lat: 0.51, lon: 34.21 }, village, questions, settings)).toEqual({})
    expect(intrinsicFlags({ ...base, lat: 0.6, lon: 34.2 }, village, questions, settings)).toEqual({ farFromVillageKm: 11.1 })
    expect(intrinsicFlags({ ...base, lat: null, lon: null, savedAt: '2026-11-20T08:01:30Z' }, village, questions, settings)).toEqual({ tooFastSeconds: 90 })
    expect(intrinsicFlags({ ...base, lat: 0.5, lon: 34.2 }, village, questions, { ...settings, farRadiusKm: 0.0001 })).toEqual({})
  })
})
