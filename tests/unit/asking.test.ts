import { describe, expect, it } from 'vitest'
import { askedQuestions, conditionText, testHolds, withoutNotAsked } from '../../shared/utils/asking'
import { fieldErrorsOf } from '../../shared/utils/zod-errors'
import { type QuestionInput, type QuestionnaireVersionDto, exportColumnsOf, outcomeQuestion, questionnaireDefinitionSchema } from '../../shared/utils/schemas/questionnaire'
import { answersSchemaFor, notAskedKeys, visitSchemaFor } from '../../shared/utils/schemas/visit'

// An invented questionnaire: credit source only with credit, the amount of seed only for adopters, and where the
// farmer heard of the seed (several answers) only when they heard of it at all.
const questions: QuestionInput[] = [
  outcomeQuestion('Ombara Gold sorghum seed'),
  { key: 'credit_access', label: 'Access to credit?', type: 'yesno', required: true },
  { key: 'credit_source', label: 'Credit source', type: 'choice', required: true, options: [{ value: 'bank', label: 'Bank' }, { value: 'savings_group', label: 'Savings group' }], askWhen: { join: 'all', tests: [{ question: 'credit_access', test: 'equals', value: true }] } },
  { key: 'seed_kg', label: 'Seed bought', type: 'number', unit: 'kg', min: 0, max: 500, askWhen: { join: 'all', tests: [{ question: 'adopted', test: 'equals', value: true }] } },
  { key: 'heard_from', label: 'Heard of the seed from', type: 'several', options: [{ value: 'radio', label: 'Radio' }, { value: 'neighbour', label: 'A neighbour' }, { value: 'field_day', label: 'A field day' }] },
  { key: 'field_day_year', label: 'Year of the field day', type: 'whole', min: 2000, max: 2030, required: true, askWhen: { join: 'any', tests: [{ question: 'heard_from', test: 'includes', value: 'field_day' }, { question: 'seed_kg', test: 'more_than', value: 100 }] } }
]
const definition = questionnaireDefinitionSchema.parse({ questions })
const version: QuestionnaireVersionDto = { id: 9, roundId: 4, number: 2, definition }

function problems(qs: QuestionInput[]) {
  const r = questionnaireDefinitionSchema.safeParse({ questions: qs })
  return r.success ? {} : fieldErrorsOf(r.error)
}

describe('the condition evaluator', () => {
  it('compares each kind of answer, and an unanswered question passes only "answered"', () => {
    expect(testHolds({ question: 'x', test: 'equals', value: true }, true)).toBe(true)
    expect(testHolds({ question: 'x', test: 'differs', value: 'bank' }, 'savings_group')).toBe(true)
    expect(testHolds({ question: 'x', test: 'differs', value: 'bank' }, undefined)).toBe(false)
    expect(testHolds({ question: 'x', test: 'at_least', value: 2 }, 2)).toBe(true)
    expect(testHolds({ question: 'x', test: 'less_than', value: 2 }, 2)).toBe(false)
    expect(testHolds({ question: 'x', test: 'more_than', value: '2026-01-01' }, '2026-03-01')).toBe(true)
    expect(testHolds({ question: 'x', test: 'includes', value: 'radio' }, ['neighbour', 'radio'])).toBe(true)
    expect(testHolds({ question: 'x', test: 'excludes', value: 'radio' }, ['neighbour'])).toBe(true)
    expect(testHolds({ question: 'x', test: 'answered' }, [])).toBe(false)
    expect(testHolds({ question: 'x', test: 'answered' }, 0)).toBe(true)
    // A wrong type never passes a comparison.
    expect(testHolds({ question: 'x', test: 'more_than', value: 2 }, '5')).toBe(false)
  })

  it('hides questions as answers change, transitively, with all/any', () => {
    expect(askedQuestions(definition.questions, { adopted: false, credit_access: false }).notAsked).toEqual(['credit_source', 'seed_kg', 'field_day_year'])
    expect(askedQuestions(definition.questions, { adopted: true, credit_access: true, seed_kg: 150 }).notAsked).toEqual([])
    expect(askedQuestions(definition.questions, { adopted: true, seed_kg: 20, heard_from: ['field_day'] }).notAsked).toEqual(['credit_source'])
    // seed_kg is hidden when the farm did not adopt: its stray answer cannot make the field-day question appear.
    expect(askedQuestions(definition.questions, { adopted: false, seed_kg: 150, credit_access: true }).notAsked).toEqual(['seed_kg', 'field_day_year'])
  })

  it('drops the answers of questions that become hidden, and says which', () => {
    const { answers, removed } = withoutNotAsked(definition.questions, { adopted: false, credit_access: true, credit_source: 'bank', seed_kg: 40 })
    expect(removed).toEqual(['seed_kg'])
    expect(answers).toEqual({ adopted: false, credit_access: true, credit_source: 'bank' })
  })

  it('says a condition in words', () => {
    expect(conditionText(definition.questions[5]!.askWhen!, definition.questions)).toBe('Heard of the seed from includes A field day or Seed bought is more than 100')
  })
})

describe('conditions checked on save', () => {
  const base = (extra: QuestionInput) => [outcomeQuestion('seed'), { key: 'size', label: 'Farm size', type: 'number' } as QuestionInput, extra]
  it('refuses a later, unknown or own question, a wrong comparison or value, and names loops', () => {
    expect(problems([outcomeQuestion('seed'), { key: 'a', label: 'A', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'b', test: 'equals', value: true }] } }, { key: 'b', label: 'B', type: 'yesno' }]))
      .toMatchObject({ 'questions.1.askWhen.tests.0.question': '"A" depends on "B", which comes later: a condition may only use questions asked before it (move one of them)' })
    expect(problems(base({ key: 'x', label: 'X', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'nothing', test: 'answered' }] } })))
      .toMatchObject({ 'questions.2.askWhen.tests.0.question': '"X" is asked depending on "nothing", which is not a question of this questionnaire' })
    expect(problems(base({ key: 'x', label: 'X', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'x', test: 'answered' }] } })))
      .toMatchObject({ 'questions.2.askWhen.tests.0.question': '"X" cannot depend on its own answer' })
    expect(problems(base({ key: 'x', label: 'X', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'size', test: 'includes', value: 'a' }] } })))
      .toMatchObject({ 'questions.2.askWhen.tests.0.test': '"Farm size" cannot be compared with "includes"' })
    expect(problems(base({ key: 'x', label: 'X', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'size', test: 'more_than', value: 'big' }] } })))
      .toMatchObject({ 'questions.2.askWhen.tests.0.value': 'X: give a number to compare "Farm size" with' })
    const loop = problems([outcomeQuestion('seed'),
      { key: 'a', label: 'A', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'b', test: 'equals', value: true }] } },
      { key: 'b', label: 'B', type: 'yesno', askWhen: { join: 'all', tests: [{ question: 'a', test: 'equals', value: true }] } }])
    expect(Object.values(loop)).toContain('These questions depend on each other in a loop: A → B → A')
    expect(problems([{ ...outcomeQuestion('seed'), askWhen: { join: 'all', tests: [{ question: 'size', test: 'answered' }] } }, { key: 'size', label: 'Size', type: 'number' }]))
      .toMatchObject({ 'questions.0.askWhen': 'The adoption question is asked at every farm: it cannot have a condition' })
  })

  it('names an option code used twice and colliding export columns', () => {
    expect(problems(base({ key: 'h', label: 'Heard from', type: 'several', options: [{ value: 'radio', label: 'Radio' }, { value: 'radio', label: 'Wireless' }] })))
      .toMatchObject({ 'questions.2.options.1.value': 'The option code "radio" is used twice in "Heard from"; give each option its own code' })
    expect(problems(base({ key: 'h', label: 'Heard from', type: 'several', options: [{ value: 'asked', label: 'A' }, { value: 'b', label: 'B' }], askWhen: { join: 'all', tests: [{ question: 'size', test: 'answered' }] } })))
      .toMatchObject({ 'questions.2.key': 'The export column "h.asked" would come from both "Heard from" and "Heard from"; change a code' })
    expect(exportColumnsOf(definition.questions[4]!)).toEqual(['heard_from.radio', 'heard_from.neighbour', 'heard_from.field_day'])
    expect(exportColumnsOf(definition.questions[3]!)).toEqual(['seed_kg', 'seed_kg.asked'])
  })
})

describe('the visit schema with conditions and several answers', () => {
  const visit = (answers: Record<string, unknown>) => ({
    id: '2b0c5a4e-6f1d-4c47-9b1e-1d2f3a4b5c6d', roundId: 4, villageId: 11, questionnaireVersionId: 9, baseVersion: 0, farmCode: 'OMB-017',
    location: { kind: 'gps', lat: -1.2, lon: 36.8, accuracyM: 8 }, answers, consent: true,
    consentAt: '2026-11-20T08:00:00.000Z', startedAt: '2026-11-20T08:00:00.000Z', savedAt: '2026-11-20T08:12:00.000Z'
  })
  const errorsOf = (answers: Record<string, unknown>) => {
    const r = visitSchemaFor(version).safeParse(visit(answers))
    return r.success ? {} : fieldErrorsOf(r.error)
  }

  it('refuses an answer to a hidden question and requires a shown one', () => {
    expect(errorsOf({ adopted: false, credit_access: false, seed_kg: 30 })).toEqual({
      'answers.seed_kg': 'Not asked at this farm (asked only when Has this farm adopted Ombara Gold sorghum seed this season? is Yes): leave it empty'
    })
    expect(errorsOf({ adopted: true, credit_access: true })).toEqual({ 'answers.credit_source': 'This answer is required' })
    expect(errorsOf({ adopted: true, credit_access: true, credit_source: 'bank', seed_kg: 120 })).toEqual({ 'answers.field_day_year': 'This answer is required' })
    expect(errorsOf({ adopted: true, credit_access: false, seed_kg: 12, heard_from: ['radio', 'field_day'], field_day_year: 2025 })).toEqual({})
    // A type error elsewhere does not hide the condition's own message.
    expect(errorsOf({ adopted: false, credit_access: 'maybe', seed_kg: 30 })).toMatchObject({ 'answers.seed_kg': expect.stringContaining('Not asked') })
  })

  it('takes several answers as a list of listed codes, each once', () => {
    expect(errorsOf({ adopted: false, credit_access: false, heard_from: ['radio', 'radio'] })).toEqual({ 'answers.heard_from': 'An answer is ticked twice' })
    expect(errorsOf({ adopted: false, credit_access: false, heard_from: ['tv'] })).toEqual({ 'answers.heard_from.0': 'Choose among the listed answers' })
    expect(errorsOf({ adopted: false, credit_access: false, heard_from: 'radio' })).toEqual({ 'answers.heard_from': 'Tick the answers that apply' })
    const required = answersSchemaFor([{ key: 'h', label: 'H', type: 'several', required: true, options: [{ value: 'a', label: 'A' }, { value: 'b', label: 'B' }] }])
    expect(required.safeParse({ h: [] }).success).toBe(false)
    expect(required.safeParse({ h: ['b'] }).success).toBe(true)
  })

  it('lists the not-asked keys that the server stores', () => {
    expect(notAskedKeys(definition.questions, { adopted: true, credit_access: false, seed_kg: 5 })).toEqual(['credit_source', 'field_day_year'])
  })
})
