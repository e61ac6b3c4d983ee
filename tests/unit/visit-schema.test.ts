import { describe, expect, it } from 'vitest'
import { fieldErrorsOf } from '../../shared/utils/zod-errors'
import { type QuestionnaireVersionDto, outcomeQuestion, questionnaireDefinitionSchema, withOutcomeQuestion } from '../../shared/utils/schemas/questionnaire'
import { adoptedOf, visitSchemaFor } from '../../shared/utils/schemas/visit'

const definition = questionnaireDefinitionSchema.parse({
  questions: [
    outcomeQuestion('drought-tolerant sorghum seed'),
    { key: 'farm_size_ha', label: 'Farm size', type: 'number', unit: 'ha', min: 0, max: 50, required: true },
    { key: 'household_size', label: 'Household size', type: 'whole', min: 1, max: 30, required: true },
    { key: 'female_head', label: 'Female-headed', type: 'yesno', required: false },
    { key: 'soil', label: 'Soil', type: 'choice', options: [{ value: 'sandy', label: 'Sandy' }, { value: 'clay', label: 'Clay' }] },
    { key: 'planted_on', label: 'Planting date', type: 'date' },
    { key: 'note', label: 'Note', type: 'text', maxLength: 10 }
  ]
})
const version: QuestionnaireVersionDto = { id: 7, roundId: 3, number: 1, definition }

function visit(overrides: Record<string, unknown> = {}, answers: Record<string, unknown> = {}) {
  return {
    id: '2b0c5a4e-6f1d-4c47-9b1e-1d2f3a4b5c6d',
    roundId: 3,
    villageId: 11,
    questionnaireVersionId: 7,
    baseVersion: 0,
    farmCode: 'OMB-017',
    location: { kind: 'gps', lat: -1.2, lon: 36.8, accuracyM: 8 },
    answers: { adopted: true, farm_size_ha: 2.5, household_size: 6, ...answers },
    consent: true,
    consentAt: '2026-11-20T08:00:00.000Z',
    startedAt: '2026-11-20T08:00:00.000Z',
    savedAt: '2026-11-20T08:12:00.000Z',
    ...overrides
  }
}

function errorsOf(input: unknown) {
  const result = visitSchemaFor(version).safeParse(input)
  return result.success ? {} : fieldErrorsOf(result.error)
}

describe('questionnaire definitions', () => {
  it('requires the adoption question as a required yes/no', () => {
    const without = questionnaireDefinitionSchema.safeParse({ questions: [{ key: 'x', label: 'X', type: 'yesno' }] })
    expect(without.success).toBe(false)
    const optional = questionnaireDefinitionSchema.safeParse({ questions: [{ ...outcomeQuestion('seed'), required: false }] })
    expect(optional.success).toBe(false)
  })

  it('puts a missing outcome question first and repairs a weakened one', () => {
    const qs = withOutcomeQuestion([{ key: 'a', label: 'A', type: 'yesno', required: false }], 'seed')
    expect(qs.map(q => q.key)).toEqual(['adopted', 'a'])
    const repaired = withOutcomeQuestion([{ key: 'adopted', label: 'Adopted?', type: 'yesno', required: false }], 'seed')
    expect(repaired[0]).toMatchObject({ key: 'adopted', label: 'Adopted?', required: true })
  })

  it.each([
    [{ key: 'Bad Key', label: 'x', type: 'yesno' }, 'questions.1.key'],
    [{ key: 'n', label: 'x', type: 'number', min: 5, max: 5 }, 'questions.1.max'],
    [{ key: 'c', label: 'x', type: 'choice', options: [{ value: 'a', label: 'A' }] }, 'questions.1.options'],
    [{ key: 'c', label: 'x', type: 'choice', options: [{ value: 'a', label: 'A' }, { value: 'a', label: 'B' }] }, 'questions.1.options.1.value'],
    [{ key: 'adopted', label: 'again', type: 'yesno', required: true }, 'questions.1.key'],
    [{ key: 'x', label: 'x', type: 'colour' }, 'questions.1.type']
  ])('refuses a bad question %#', (question, path) => {
    const result = questionnaireDefinitionSchema.safeParse({ questions: [outcomeQuestion('seed'), question] })
    expect(result.success).toBe(false)
    expect(Object.keys(fieldErrorsOf(result.error!))).toContain(path)
  })
})

describe('visitSchemaFor', () => {
  it('accepts a complete visit and gives the same schema object for the same version', () => {
    expect(errorsOf(visit())).toEqual({})
    expect(visitSchemaFor(version)).toBe(visitSchemaFor(version))
  })

  it('accepts optional answers absent or null, and a manual location with a reason', () => {
    expect(errorsOf(visit({ location: { kind: 'manual', reason: 'No fix under the trees' } }, { female_head: null, soil: 'clay', planted_on: '2026-10-02', note: 'ok' }))).toEqual({})
  })

  it.each([
    ['wrong type for a number', { farm_size_ha: '2.5' }, 'answers.farm_size_ha', 'Enter a number'],
    ['below the minimum', { farm_size_ha: -1 }, 'answers.farm_size_ha', 'At least 0 ha'],
    ['above the maximum', { farm_size_ha: 51 }, 'answers.farm_size_ha', 'At most 50 ha'],
    ['a fraction for a whole number', { household_size: 2.5 }, 'answers.household_size', 'Enter a whole number'],
    ['a missing required answer', { household_size: undefined }, 'answers.household_size', 'This answer is required'],
    ['a yes/no given as text', { female_head: 'yes' }, 'answers.female_head', 'Choose yes or no'],
    ['an unlisted option', { soil: 'loam' }, 'answers.soil', 'Choose one of the listed answers'],
    ['a bad date', { planted_on: '02/10/2026' }, 'answers.planted_on', 'Enter a date as YYYY-MM-DD'],
    ['too long a text', { note: 'much too long here' }, 'answers.note', 'At most 10 characters'],
    ['the outcome missing', { adopted: undefined }, 'answers.adopted', 'This answer is required']
  ])('refuses %s', (_what, answers, field, message) => {
    expect(errorsOf(visit({}, answers))[field]).toBe(message)
  })

  it('refuses unknown questions by name', () => {
    expect(errorsOf(visit({}, { colour_of_door: 'blue' }))).toEqual({ answers: 'Not a question of this questionnaire: colour_of_door' })
  })

  it.each([
    ['no consent', { consent: false }, 'consent'],
    ['a bad id', { id: 'visit-1' }, 'id'],
    ['another round', { roundId: 4 }, 'roundId'],
    ['another version', { questionnaireVersionId: 8 }, 'questionnaireVersionId'],
    ['an empty farm code', { farmCode: '  ' }, 'farmCode'],
    ['a manual location without a reason', { location: { kind: 'manual', reason: '' } }, 'location.reason'],
    ['a latitude out of range', { location: { kind: 'gps', lat: 95, lon: 0, accuracyM: 5 } }, 'location.lat'],
    ['saved before started', { savedAt: '2026-11-20T07:00:00.000Z' }, 'savedAt'],
    ['an unknown top-level field', { colour: 'red' }, '_']
  ])('refuses %s', (_what, overrides, field) => {
    expect(Object.keys(errorsOf(visit(overrides)))).toContain(field)
  })

  it('reads the outcome as 0/1', () => {
    expect(adoptedOf({ adopted: true })).toBe(1)
    expect(adoptedOf({ adopted: false })).toBe(0)
  })
})
