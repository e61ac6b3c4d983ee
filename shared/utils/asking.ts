import type { Condition, ConditionTestSpec } from './schemas/conditions'
import { TESTS_BY_TYPE, testWords } from './schemas/conditions'
import { ownValue } from './schemas/safe-text'

// THE evaluator of questionnaire conditions: the tablet's form, the visit schema (and so the sync route, review
// corrections and the CSV import) all call askedQuestions(). A hidden question is "not asked": it must hold no answer,
// and the server stores its key in the visit's not-asked list, which is not the same as an answer left empty.

/** What the evaluator needs of a question (structurally a subset of the questionnaire's Question). */
export interface AskableQuestion {
  key: string
  label?: string
  type: string
  askWhen?: Condition | null
  options?: ReadonlyArray<{ value: string, label: string }>
}

/** No answer: absent, null, empty text or an empty list. */
export function isNoAnswer(value: unknown): boolean {
  return value === undefined || value === null || value === '' || (Array.isArray(value) && value.length === 0)
}

function compareNumbers(a: unknown, b: unknown): number | null {
  if (typeof a === 'number' && typeof b === 'number' && Number.isFinite(a) && Number.isFinite(b)) return a - b
  // Dates are ISO YYYY-MM-DD: their text order is their time order.
  if (typeof a === 'string' && typeof b === 'string' && /^\d{4}-\d{2}-\d{2}$/.test(a) && /^\d{4}-\d{2}-\d{2}$/.test(b)) return a < b ? -1 : a > b ? 1 : 0
  return null
}

/**
 * Whether one test holds for an answer. A question that was not answered (or not asked) passes only "answered"'s
 * opposite: every other test is false, so a question that depends on an unanswered one stays hidden.
 * Tolerant of answers of the wrong type (the visit schema names those separately).
 */
export function testHolds(test: ConditionTestSpec, answer: unknown): boolean {
  if (test.test === 'answered') return !isNoAnswer(answer)
  if (isNoAnswer(answer)) return false
  switch (test.test) {
    case 'equals': return answer === test.value
    case 'differs': return answer !== test.value
    case 'includes': return Array.isArray(answer) && answer.includes(test.value)
    case 'excludes': return Array.isArray(answer) && !answer.includes(test.value)
    default: {
      const d = compareNumbers(answer, test.value)
      if (d === null) return false
      return test.test === 'more_than' ? d > 0 : test.test === 'at_least' ? d >= 0 : test.test === 'less_than' ? d < 0 : d <= 0
    }
  }
}

export function conditionHolds(condition: Condition, answerOf: (key: string) => unknown): boolean {
  const results = condition.tests.map(t => testHolds(t, answerOf(t.question)))
  return condition.join === 'any' ? results.some(Boolean) : results.every(Boolean)
}

export interface Asking {
  asked: Set<string>
  /** Keys of the questions hidden by their condition, in questionnaire order. */
  notAsked: string[]
}

/**
 * Which questions are asked for these answers, in questionnaire order. A condition sees only the answers of
 * questions that were asked: the answer of a hidden question counts as none (so hiding is transitive).
 */
export function askedQuestions(questions: readonly AskableQuestion[], answers: Record<string, unknown> | null | undefined): Asking {
  const asked = new Set<string>()
  const notAsked: string[] = []
  const source = answers && typeof answers === 'object' && !Array.isArray(answers) ? answers : {}
  const answerOf = (key: string) => asked.has(key) ? ownValue(source, key) : undefined
  for (const q of questions) {
    if (!q.askWhen || conditionHolds(q.askWhen, answerOf)) asked.add(q.key)
    else notAsked.push(q.key)
  }
  return { asked, notAsked }
}

/** The answers with every not-asked question removed: what the tablet keeps when a question becomes hidden. */
export function withoutNotAsked(questions: readonly AskableQuestion[], answers: Record<string, unknown>): { answers: Record<string, unknown>, removed: string[] } {
  const { notAsked } = askedQuestions(questions, answers)
  const removed = notAsked.filter(k => !isNoAnswer(ownValue(answers, k)))
  if (!removed.length) return { answers, removed }
  const kept = Object.fromEntries(Object.entries(answers).filter(([k]) => !notAsked.includes(k)))
  return { answers: kept, removed }
}

function valueWords(test: ConditionTestSpec, target: AskableQuestion | undefined): string {
  if (test.test === 'answered') return ''
  if (typeof test.value === 'boolean') return test.value ? 'Yes' : 'No'
  const option = target?.options?.find(o => o.value === test.value)
  return option ? option.label : String(test.value ?? '')
}

/** The condition in words: "Asked when: Access to credit is Yes and Farm size is more than 2". */
export function conditionText(condition: Condition, questions: readonly AskableQuestion[]): string {
  const parts = condition.tests.map((t) => {
    const target = questions.find(q => q.key === t.question)
    return [target?.label ?? t.question, testWords(t.test, target?.type), valueWords(t, target)].filter(Boolean).join(' ')
  })
  return parts.join(condition.join === 'any' ? ' or ' : ' and ')
}

export interface DefinitionProblem { path: Array<string | number>, message: string }

/**
 * Checks every condition of a questionnaire on save: each test names an earlier question (not a later or unknown
 * one, not itself), uses a comparison that question's kind of answer offers, and compares with a value of the right
 * kind (an option the question lists). Loops are named as loops.
 */
export function conditionProblems(questions: readonly AskableQuestion[]): DefinitionProblem[] {
  const problems: DefinitionProblem[] = []
  const position = new Map(questions.map((q, i) => [q.key, i]))
  questions.forEach((q, i) => {
    q.askWhen?.tests.forEach((t, j) => {
      const path = ['questions', i, 'askWhen', 'tests', j]
      const at = position.get(t.question)
      const target = at === undefined ? undefined : questions[at]
      const name = q.label || q.key
      if (at === undefined || !target) {
        problems.push({ path: [...path, 'question'], message: `"${name}" is asked depending on "${t.question}", which is not a question of this questionnaire` })
        return
      }
      const targetName = target.label || target.key
      if (at === i) {
        problems.push({ path: [...path, 'question'], message: `"${name}" cannot depend on its own answer` })
        return
      }
      if (at > i) {
        problems.push({ path: [...path, 'question'], message: `"${name}" depends on "${targetName}", which comes later: a condition may only use questions asked before it (move one of them)` })
        return
      }
      if (!(TESTS_BY_TYPE[target.type] ?? []).includes(t.test)) {
        problems.push({ path: [...path, 'test'], message: `"${targetName}" cannot be compared with "${testWords(t.test, target.type)}"` })
        return
      }
      const valueProblem = conditionValueProblem(t, target)
      if (valueProblem) problems.push({ path: [...path, 'value'], message: `${name}: ${valueProblem}` })
    })
  })
  for (const loop of dependencyLoops(questions)) {
    const names = loop.map(k => questions.find(q => q.key === k)?.label || k)
    problems.push({ path: ['questions', position.get(loop[0]!) ?? 0, 'askWhen'], message: `These questions depend on each other in a loop: ${names.join(' → ')}` })
  }
  return problems
}

function conditionValueProblem(t: ConditionTestSpec, target: AskableQuestion): string | null {
  if (t.test === 'answered') return null
  const v = t.value
  switch (target.type) {
    case 'yesno': return typeof v === 'boolean' ? null : `choose Yes or No for "${target.label ?? target.key}"`
    case 'choice':
    case 'several': return typeof v === 'string' && target.options?.some(o => o.value === v) ? null : `choose one of the options of "${target.label ?? target.key}"`
    case 'number':
    case 'whole': return typeof v === 'number' && Number.isFinite(v) ? null : `give a number to compare "${target.label ?? target.key}" with`
    case 'date': return typeof v === 'string' && /^\d{4}-\d{2}-\d{2}$/.test(v) ? null : `give a date (YYYY-MM-DD) to compare "${target.label ?? target.key}" with`
    default: return null
  }
}

/** Every loop among the conditions' references (each reported once, starting from its first question). */
function dependencyLoops(questions: readonly AskableQuestion[]): string[][] {
  const edges = new Map(questions.map(q => [q.key, [...new Set(q.askWhen?.tests.map(t => t.question) ?? [])]]))
  const loops: string[][] = []
  const seen = new Set<string>()
  const state = new Map<string, 'open' | 'done'>()
  const stack: string[] = []
  const visit = (key: string) => {
    state.set(key, 'open')
    stack.push(key)
    for (const next of edges.get(key) ?? []) {
      if (!edges.has(next)) continue
      if (state.get(next) === 'open') {
        const loop = [...stack.slice(stack.indexOf(next)), next]
        const id = [...new Set(loop)].sort().join(',')
        // A question testing itself is reported as such above; here only loops through two or more questions.
        if (loop.length > 2 && !seen.has(id)) {
          seen.add(id)
          loops.push(loop)
        }
      }
      else if (!state.has(next)) visit(next)
    }
    stack.pop()
    state.set(key, 'done')
  }
  for (const q of questions) if (!state.has(q.key)) visit(q.key)
  return loops
}
