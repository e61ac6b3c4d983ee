import { describe, expect, it } from 'vitest'
import { fieldErrorsOf } from '../../shared/utils/zod-errors'
import { type QuestionnaireVersionDto, outcomeQuestion, questionnaireDefinitionSchema } from '../../shared/utils/schemas/questionnaire'
import { answersSchemaFor, visitSchemaFor } from '../../shared/utils/schemas/visit'
import { rowAsking, rowsWithoutNotAsked } from '../../shared/utils/schemas/group-rows'

const plots = {
  key: 'plots',
  label: 'Plots',
  minRows: 1,
  maxRows: 4,
  questions: [
    { key: 'plot_size', label: 'Plot size', type: 'number', unit: 'ha', min: 0, max: 20, required: true },
    { key: 'plot_soil', label: 'Soil', type: 'choice', options: [{ value: 'sandy', label: 'Sandy' }, { value: 'loam', label: 'Loam' }] },
    { key: 'plot_used', label: 'Technology used on this plot', type: 'yesno', required: true },
    // Depends on the row's own earlier answer.
    { key: 'plot_seed_kg', label: 'Seed sown', type: 'number', unit: 'kg', required: true, askWhen: { join: 'all', tests: [{ question: 'plot_used', test: 'equals', value: true }] } },
    // Depends on a top-level answer.
    { key: 'plot_credit_paid', label: 'Paid with the credit', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'credit', test: 'equals', value: true }] } }
  ]
}
const base = [outcomeQuestion('storage bags'), { key: 'credit', label: 'Access to credit', type: 'yesno', required: true }]
const definition = questionnaireDefinitionSchema.parse({ questions: base, groups: [plots] })
const version: QuestionnaireVersionDto = { id: 9, roundId: 4, number: 1, definition }

const ROW1 = '6f1d2b0c-5a4e-4c47-9b1e-1d2f3a4b5c6d'
const ROW2 = '7a2e3c1d-6b5f-4d58-8c2f-2e3f4a5b6c7d'

function problemsOf(input: unknown) {
  const result = questionnaireDefinitionSchema.safeParse(input)
  return result.success ? {} : fieldErrorsOf(result.error)
}
function answerErrors(answers: Record<string, unknown>) {
  const result = answersSchemaFor(definition.questions, definition.checks, definition.groups).safeParse(answers)
  return result.success ? {} : fieldErrorsOf(result.error)
}

describe('group definitions', () => {
  it('takes a group and keeps earlier definitions without groups valid', () => {
    expect(definition.groups?.[0]?.questions.map(q => q.key)).toEqual(['plot_size', 'plot_soil', 'plot_used', 'plot_seed_kg', 'plot_credit_paid'])
    expect(questionnaireDefinitionSchema.safeParse({ questions: base }).success).toBe(true)
  })

  it('refuses a repeat inside a repeat with a plain message, however it is posted', () => {
    const nestedQuestion = problemsOf({ questions: base, groups: [{ ...plots, questions: [...plots.questions, { key: 'sub', label: 'Sub-plots', type: 'group', questions: [] }] }] })
    expect(Object.values(nestedQuestion).join(' ')).toMatch(/A group cannot hold another group/)
    const nestedGroups = problemsOf({ questions: base, groups: [{ ...plots, groups: [{ key: 'sub', label: 'Sub', questions: [] }] }] })
    expect(Object.values(nestedGroups).join(' ')).toMatch(/A group cannot hold another group/)
  })

  it('refuses a key used twice anywhere in the definition', () => {
    const twiceTop = problemsOf({ questions: base, groups: [{ ...plots, questions: [{ key: 'credit', label: 'Credit', type: 'yesno' }] }] })
    expect(twiceTop['groups.0.questions.0.key']).toMatch(/used twice/)
    const groupKey = problemsOf({ questions: base, groups: [{ ...plots, key: 'credit' }] })
    expect(groupKey['groups.0.key']).toMatch(/used twice/)
    const acrossGroups = problemsOf({ questions: base, groups: [plots, { key: 'animals', label: 'Animals', questions: [{ key: 'plot_size', label: 'x', type: 'number' }] }] })
    expect(acrossGroups['groups.1.questions.0.key']).toMatch(/used twice/)
  })

  it('refuses a row condition on a later row question or on another group', () => {
    const later = problemsOf({ questions: base, groups: [{ ...plots, questions: [{ key: 'a_q', label: 'A', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'b_q', test: 'equals', value: true }] } }, { key: 'b_q', label: 'B', type: 'yesno' }] }] })
    expect(later['groups.0.questions.0.askWhen.tests.0.question']).toMatch(/comes later/)
    const other = problemsOf({ questions: base, groups: [plots, { key: 'animals', label: 'Animals', questions: [{ key: 'cows', label: 'Cows', type: 'whole', askWhen: { join: 'all', tests: [{ question: 'plot_used', test: 'equals', value: true }] } }] }] })
    expect(other['groups.1.questions.0.askWhen.tests.0.question']).toMatch(/not a question/)
  })

  it('refuses the fewest rows above the most, and the outcome inside a group', () => {
    expect(problemsOf({ questions: base, groups: [{ ...plots, minRows: 5, maxRows: 2 }] })['groups.0.maxRows']).toMatch(/at least the fewest/)
    expect(Object.values(problemsOf({ questions: [base[1]], groups: [{ ...plots, questions: [outcomeQuestion('x')] }] })).join(' ')).toMatch(/cannot be inside a group/)
  })
})

describe('group rows in a visit', () => {
  const good = { adopted: true, credit: false, plots: [
    { row: ROW1, plot_size: 1.2, plot_soil: 'loam', plot_used: true, plot_seed_kg: 10 },
    { row: ROW2, plot_size: 0.5, plot_used: false }
  ] }

  it('takes rows that answer what they must', () => {
    expect(answerErrors(good)).toEqual({})
  })

  it('names the row and the field of a row missing a required answer', () => {
    const errors = answerErrors({ ...good, plots: [good.plots[0], { row: ROW2, plot_used: false }] })
    expect(errors).toEqual({ 'plots.1.plot_size': 'This answer is required' })
  })

  it('applies the row conditions with the row and the visit answers', () => {
    expect(answerErrors({ ...good, plots: [{ row: ROW1, plot_size: 1, plot_used: true }] })).toEqual({ 'plots.0.plot_seed_kg': 'This answer is required' })
    expect(answerErrors({ ...good, plots: [{ row: ROW1, plot_size: 1, plot_used: false, plot_seed_kg: 3 }] })['plots.0.plot_seed_kg']).toMatch(/Not asked for this row/)
    expect(answerErrors({ ...good, plots: [{ row: ROW1, plot_size: 1, plot_used: false, plot_credit_paid: true }] })['plots.0.plot_credit_paid']).toMatch(/Not asked/)
    expect(answerErrors({ ...good, credit: true, plots: [{ row: ROW1, plot_size: 1, plot_used: false, plot_credit_paid: true }] })).toEqual({})
  })

  it('refuses too few or too many rows, unknown keys, a bad row id and a value of the wrong type', () => {
    expect(answerErrors({ adopted: true, credit: false })['plots']).toMatch(/at least 1 row/)
    const five = Array.from({ length: 5 }, () => ({ row: crypto.randomUUID(), plot_size: 1, plot_used: false }))
    expect(answerErrors({ ...good, plots: five })['plots']).toMatch(/At most 4 rows/)
    expect(answerErrors({ ...good, plots: [{ ...good.plots[1], colour: 'red' }] })['plots.0']).toMatch(/Not a question of "Plots"/)
    expect(answerErrors({ ...good, plots: [{ ...good.plots[1], row: 'x' }] })['plots.0.row']).toBeTruthy()
    expect(answerErrors({ ...good, plots: [{ ...good.plots[1], plot_size: 'big' }] })['plots.0.plot_size']).toMatch(/number/)
    expect(answerErrors({ ...good, plots: [good.plots[1], good.plots[1]] })['plots']).toMatch(/same id/)
  })

  it('rejects the whole visit record through the version schema with the row path', () => {
    const visit = {
      id: '2b0c5a4e-6f1d-4c47-9b1e-1d2f3a4b5c6d', roundId: 4, villageId: 1, questionnaireVersionId: 9, baseVersion: 0, farmCode: 'KAL-001',
      location: { kind: 'gps', lat: -1, lon: 36, accuracyM: 5 }, consent: true,
      consentAt: '2026-11-20T08:00:00.000Z', startedAt: '2026-11-20T08:00:00.000Z', savedAt: '2026-11-20T08:12:00.000Z',
      answers: { ...good, plots: [{ row: ROW1, plot_used: true, plot_seed_kg: 2 }] }
    }
    const result = visitSchemaFor(version).safeParse(visit)
    expect(result.success).toBe(false)
    expect(fieldErrorsOf(result.error!)).toEqual({ 'answers.plots.0.plot_size': 'This answer is required' })
  })

  it('drops the answers a row no longer asks', () => {
    const g = definition.groups![0]!
    expect([...rowAsking(definition.questions, g, { credit: false }, { plot_used: false }).notAsked]).toEqual(['plot_seed_kg', 'plot_credit_paid'])
    const kept = rowsWithoutNotAsked(definition.questions, definition.groups!, { credit: false, plots: [{ row: ROW1, plot_used: false, plot_seed_kg: 4 }] })
    expect(kept.plots).toEqual([{ row: ROW1, plot_used: false }])
  })
})

describe('a correction of rows in words', () => {
  it('names each changed answer by row and label, and rows added or removed', async () => {
    const { groupChangeLines } = await import('../../app/utils/group-text')
    const g = definition.groups![0]!
    const before = [{ row: ROW1, plot_size: 0.8, plot_used: false }, { row: ROW2, plot_size: 2, plot_used: false }]
    const after = [{ row: ROW1, plot_size: 0.9, plot_used: false, plot_soil: 'loam' }]
    expect(groupChangeLines(g, before, after)).toEqual([
      'Plots, row 1 · Plot size: 0.8 ha → 0.9 ha',
      'Plots, row 1 · Soil: — → Loam',
      'Plots, row 2 removed (as it was before)'
    ])
  })
})
