import { z } from 'zod'
import { safeText } from './safe-text'

// When a question is asked: a list of tests on earlier answers, joined by "all" or "any". Stored inside the
// questionnaire version as plain data (never as an expression to parse), so the builder edits it through a form and
// one evaluator (shared/utils/asking.ts) decides on the tablet and on the server alike.

export const CONDITION_TESTS = ['equals', 'differs', 'more_than', 'at_least', 'less_than', 'at_most', 'includes', 'excludes', 'answered'] as const
export type ConditionTest = typeof CONDITION_TESTS[number]

/** Which tests each kind of answer offers (the builder's list and the save check agree through this table). */
export const TESTS_BY_TYPE: Record<string, readonly ConditionTest[]> = {
  yesno: ['equals', 'differs', 'answered'],
  choice: ['equals', 'differs', 'answered'],
  several: ['includes', 'excludes', 'answered'],
  number: ['equals', 'differs', 'more_than', 'at_least', 'less_than', 'at_most', 'answered'],
  whole: ['equals', 'differs', 'more_than', 'at_least', 'less_than', 'at_most', 'answered'],
  date: ['equals', 'more_than', 'less_than', 'answered'],
  text: ['answered']
}

/** The words of each test as the builder and the tablet show them; dates read "after"/"before". */
export function testWords(test: ConditionTest, type?: string): string {
  if (type === 'date' && test === 'more_than') return 'is after'
  if (type === 'date' && test === 'less_than') return 'is before'
  return TEST_WORDS[test]
}
const TEST_WORDS: Record<ConditionTest, string> = {
  equals: 'is',
  differs: 'is not',
  more_than: 'is more than',
  at_least: 'is at least',
  less_than: 'is less than',
  at_most: 'is at most',
  includes: 'includes',
  excludes: 'does not include',
  answered: 'has an answer'
}

const questionKey = z.string().trim().regex(/^[a-z][a-z0-9_]{0,39}$/, 'Choose an earlier question')

export const conditionTestSchema = z.object({
  /** The earlier question whose answer is tested. */
  question: questionKey,
  test: z.enum(CONDITION_TESTS, { error: 'Choose how to compare' }),
  /** Yes/no: true/false; choice and several: an option code; numbers: a number; dates: YYYY-MM-DD. None for "answered". */
  value: z.union([z.number().finite(), z.boolean(), safeText(z.string().trim().max(40))]).nullable().optional()
})
export type ConditionTestSpec = z.infer<typeof conditionTestSchema>

export const conditionSchema = z.object({
  join: z.enum(['all', 'any']).default('all'),
  tests: z.array(conditionTestSchema).min(1, 'Add at least one test, or remove the condition').max(10, 'At most 10 tests per condition')
})
export type Condition = z.infer<typeof conditionSchema>
export type ConditionInput = z.input<typeof conditionSchema>
