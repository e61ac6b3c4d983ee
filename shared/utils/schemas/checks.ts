import { z } from 'zod'
import { checkMessagesSchema } from './languages'
import { safeText } from './safe-text'

// Checks across answers, written by the coordinator: "this answer must be at most that one (or a number)", with the
// message the enumerator reads when it fails. Stored in the questionnaire version as plain data beside the questions;
// evaluated by failedChecks() (shared/utils/answer-checks.ts) on the tablet, as the answers change, and on the server.

export const CHECK_TESTS = ['at_most', 'less_than', 'at_least', 'more_than', 'equals', 'differs'] as const
export type CheckTest = typeof CHECK_TESTS[number]

export const CHECK_TEST_WORDS: Record<CheckTest, string> = {
  at_most: 'must be at most',
  less_than: 'must be less than',
  at_least: 'must be at least',
  more_than: 'must be more than',
  equals: 'must equal',
  differs: 'must differ from'
}

const questionKey = z.string().trim().regex(/^[a-z][a-z0-9_]{0,39}$/, 'Choose a question')

const against = z.union([
  z.object({ question: questionKey }),
  z.object({ value: z.union([z.number().finite(), safeText(z.string().trim().regex(/^\d{4}-\d{2}-\d{2}$/, 'Give a date as YYYY-MM-DD'))]) })
], { error: 'Compare with another question or a value' })

export const answerCheckSchema = z.object({
  /** The answer checked; the message is shown under it. */
  question: questionKey,
  test: z.enum(CHECK_TESTS, { error: 'Choose how to compare' }),
  against,
  message: safeText(z.string().trim().min(3, 'Write the message the enumerator will read').max(200, 'At most 200 characters')),
  /** The message in the questionnaire's other languages, by language code. */
  messages: checkMessagesSchema.optional()
})
export type AnswerCheck = z.infer<typeof answerCheckSchema>
export type AnswerCheckInput = z.input<typeof answerCheckSchema>
