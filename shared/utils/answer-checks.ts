import { askedQuestions, isNoAnswer, type AskableQuestion } from './asking'
import type { AnswerCheck } from './schemas/checks'
import { ownValue } from './schemas/safe-text'

// THE evaluator of checks across answers, shared by the tablet (messages inline as the answers change) and the visit
// schema (so sync, review corrections and the CSV import refuse a record that breaks one). A check whose answers are
// missing or not asked is not applied: "required" and the conditions speak for those.

export interface FailedCheck {
  index: number
  question: string
  message: string
}

function comparable(value: unknown): number | string | null {
  if (typeof value === 'number' && Number.isFinite(value)) return value
  if (typeof value === 'string' && /^\d{4}-\d{2}-\d{2}$/.test(value)) return value
  return null
}

function holds(test: AnswerCheck['test'], a: number | string, b: number | string): boolean {
  if (typeof a !== typeof b) return true // different kinds cannot be compared: the definition check refuses them
  switch (test) {
    case 'at_most': return a <= b
    case 'less_than': return a < b
    case 'at_least': return a >= b
    case 'more_than': return a > b
    case 'equals': return a === b
    case 'differs': return a !== b
  }
}

/** The checks these answers break, in the definition's order. */
export function failedChecks(questions: readonly AskableQuestion[], checks: readonly AnswerCheck[] | undefined, answers: Record<string, unknown>): FailedCheck[] {
  if (!checks?.length) return []
  const { asked } = askedQuestions(questions, answers)
  const valueOf = (key: string) => asked.has(key) ? ownValue(answers, key) : undefined
  const failed: FailedCheck[] = []
  checks.forEach((check, index) => {
    const left = valueOf(check.question)
    const right = 'question' in check.against ? valueOf(check.against.question) : check.against.value
    if (isNoAnswer(left) || isNoAnswer(right)) return
    const a = comparable(left)
    const b = comparable(right)
    if (a === null || b === null) return
    if (!holds(check.test, a, b)) failed.push({ index, question: check.question, message: check.message })
  })
  return failed
}

const family = (type: string | undefined) => type === 'number' || type === 'whole' ? 'number' : type === 'date' ? 'date' : null

/** Checks a definition's checks on save: known questions of numbers or dates, compared with their own kind. */
export function checkDefinitionProblems(questions: readonly AskableQuestion[], checks: readonly AnswerCheck[] | undefined): Array<{ path: Array<string | number>, message: string }> {
  const problems: Array<{ path: Array<string | number>, message: string }> = []
  const byKey = new Map(questions.map(q => [q.key, q]))
  checks?.forEach((check, i) => {
    const q = byKey.get(check.question)
    const kind = family(q?.type)
    if (!q || !kind) {
      problems.push({ path: ['checks', i, 'question'], message: q ? `"${q.label ?? q.key}" is not a number or a date: a check compares numbers or dates` : `The check refers to "${check.question}", which is not a question of this questionnaire` })
      return
    }
    if ('question' in check.against) {
      const other = byKey.get(check.against.question)
      if (!other) problems.push({ path: ['checks', i, 'against', 'question'], message: `The check compares with "${check.against.question}", which is not a question of this questionnaire` })
      else if (other.key === q.key) problems.push({ path: ['checks', i, 'against', 'question'], message: `"${q.label ?? q.key}" cannot be checked against itself` })
      else if (family(other.type) !== kind) problems.push({ path: ['checks', i, 'against', 'question'], message: `"${q.label ?? q.key}" and "${other.label ?? other.key}" are not the same kind of answer` })
    }
    else if ((kind === 'number') !== (typeof check.against.value === 'number')) {
      problems.push({ path: ['checks', i, 'against', 'value'], message: kind === 'number' ? 'Give a number to compare with' : 'Give a date (YYYY-MM-DD) to compare with' })
    }
  })
  return problems
}
