import { describe, expect, it } from 'vitest'
import { failedChecks } from '../../shared/utils/answer-checks'
import { fieldErrorsOf } from '../../shared/utils/zod-errors'
import type { AnswerCheckInput } from '../../shared/utils/schemas/checks'
import { type QuestionInput, outcomeQuestion, questionnaireDefinitionSchema } from '../../shared/utils/schemas/questionnaire'
import { answersSchemaFor } from '../../shared/utils/schemas/visit'

// An invented questionnaire: the area under the technology cannot pass the farm's size, and planting comes after
// the season opened (a date check with a value).
const questions: QuestionInput[] = [
  outcomeQuestion('Ombara Gold sorghum seed'),
  { key: 'farm_size_ha', label: 'Farm size', type: 'number', unit: 'ha', min: 0, max: 100, required: true },
  { key: 'area_ha', label: 'Area sown with the seed', type: 'number', unit: 'ha', min: 0, max: 100, askWhen: { join: 'all', tests: [{ question: 'adopted', test: 'equals', value: true }] } },
  { key: 'planted_on', label: 'Planting date', type: 'date' },
  { key: 'note', label: 'Note', type: 'text' }
]
const checks: AnswerCheckInput[] = [
  { question: 'area_ha', test: 'at_most', against: { question: 'farm_size_ha' }, message: 'The area sown cannot be larger than the farm: check both with the farmer.' },
  { question: 'planted_on', test: 'at_least', against: { value: '2026-10-01' }, message: 'Planting is counted from 1 October 2026.' }
]
const definition = questionnaireDefinitionSchema.parse({ questions, checks })

function problems(c: AnswerCheckInput[]) {
  const r = questionnaireDefinitionSchema.safeParse({ questions, checks: c })
  return r.success ? {} : fieldErrorsOf(r.error)
}

describe('checks across answers', () => {
  it('fails with the coordinator\'s message, and skips while an answer is missing or not asked', () => {
    expect(failedChecks(definition.questions, definition.checks, { adopted: true, farm_size_ha: 2, area_ha: 2.5 })).toEqual([
      { index: 0, question: 'area_ha', message: 'The area sown cannot be larger than the farm: check both with the farmer.' }
    ])
    expect(failedChecks(definition.questions, definition.checks, { adopted: true, farm_size_ha: 2, area_ha: 2 })).toEqual([])
    expect(failedChecks(definition.questions, definition.checks, { adopted: true, area_ha: 9 })).toEqual([])
    // Not asked (the farm did not adopt): a stray area is the condition's business, not the check's.
    expect(failedChecks(definition.questions, definition.checks, { adopted: false, farm_size_ha: 2, area_ha: 9 })).toEqual([])
    expect(failedChecks(definition.questions, definition.checks, { adopted: false, farm_size_ha: 2, planted_on: '2026-09-12' }).map(f => f.message)).toEqual(['Planting is counted from 1 October 2026.'])
  })

  it('is enforced by the visit schema under the answer checked', () => {
    const schema = answersSchemaFor(definition.questions, definition.checks)
    const r = schema.safeParse({ adopted: true, farm_size_ha: 1.5, area_ha: 4, planted_on: '2026-09-30' })
    expect(r.success).toBe(false)
    expect(fieldErrorsOf(r.error!)).toEqual({
      area_ha: 'The area sown cannot be larger than the farm: check both with the farmer.',
      planted_on: 'Planting is counted from 1 October 2026.'
    })
    expect(schema.safeParse({ adopted: true, farm_size_ha: 1.5, area_ha: 1.5, planted_on: '2026-10-01' }).success).toBe(true)
  })

  it('refuses on save a check on an unknown or non-comparable question, a mismatched kind, no message', () => {
    expect(problems([{ question: 'note', test: 'at_most', against: { value: 3 }, message: 'Too long' }]))
      .toEqual({ 'checks.0.question': '"Note" is not a number or a date: a check compares numbers or dates' })
    expect(problems([{ question: 'area_ha', test: 'at_most', against: { question: 'planted_on' }, message: 'Odd' }]))
      .toEqual({ 'checks.0.against.question': '"Area sown with the seed" and "Planting date" are not the same kind of answer' })
    expect(problems([{ question: 'area_ha', test: 'at_most', against: { question: 'area_ha' }, message: 'Odd' }]))
      .toEqual({ 'checks.0.against.question': '"Area sown with the seed" cannot be checked against itself' })
    expect(problems([{ question: 'planted_on', test: 'at_most', against: { value: 4 }, message: 'Odd' }]))
      .toEqual({ 'checks.0.against.value': 'Give a date (YYYY-MM-DD) to compare with' })
    expect(problems([{ question: 'gone', test: 'at_most', against: { value: 4 }, message: 'Odd' }]))
      .toEqual({ 'checks.0.question': 'The check refers to "gone", which is not a question of this questionnaire' })
    expect(problems([{ question: 'area_ha', test: 'at_most', against: { value: 4 }, message: '' }]))
      .toEqual({ 'checks.0.message': 'Write the message the enumerator will read' })
  })
})
