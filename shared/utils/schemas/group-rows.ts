import { z } from 'zod'
import { askedQuestions, conditionText, isNoAnswer, type AskableQuestion } from '../asking'
import { rowsOf, type AskableGroup } from './groups'
import { ownValue } from './safe-text'

// The rows of a repeated group inside a visit's answers: checked by the same visit schema as the rest of the visit
// (answersSchemaFor), so the tablet, sync, review corrections all refuse the same things, with paths such as
// `plots.1.plot_size` (the group's key, the row's place counted from 0, the question's key).

const REQUIRED = 'This answer is required'

interface RowQuestion extends AskableQuestion { required?: boolean }
interface RowGroup extends AskableGroup { questions: readonly RowQuestion[] }

/** The shape of a group's rows: a list (within the group's bounds) of strict row objects with a row id. */
export function rowsSchemaOf(group: RowGroup, answerSchema: (q: never) => z.ZodType) {
  const shape: Record<string, z.ZodType> = { row: z.uuid({ error: 'Each row needs its id' }) }
  for (const q of group.questions) {
    const s = answerSchema(q as never)
    shape[q.key] = q.required && !q.askWhen
      ? z.unknown().refine(v => !isNoAnswer(v), REQUIRED).pipe(s)
      : s.nullable().optional()
  }
  const row = z.strictObject(shape, { error: issue => issue.code === 'unrecognized_keys' ? `Not a question of "${group.label}": ${issue.keys.join(', ')}` : 'Each row must be an object' })
  let rows = z.array(row, { error: `"${group.label}" must be a list of rows` }).max(group.maxRows ?? 50, `At most ${group.maxRows ?? 50} rows in "${group.label}"`)
  if (group.minRows) rows = rows.min(group.minRows, `Add at least ${group.minRows} ${group.minRows === 1 ? 'row' : 'rows'} to "${group.label}"`)
  const unique = rows.refine(list => new Set(list.map(r => (r as { row: string }).row)).size === list.length, 'Two rows share the same id')
  return group.minRows ? z.unknown().transform(v => v ?? []).pipe(unique) : unique.nullable().optional()
}

/** Which of a row's questions are asked: its conditions may use the row's earlier answers and the visit's answers. */
export function rowAsking(questions: readonly AskableQuestion[], group: AskableGroup, answers: Record<string, unknown>, row: Record<string, unknown>) {
  const { notAsked } = askedQuestions([...questions, ...group.questions], { ...answers, ...row })
  const own = new Set(group.questions.map(q => q.key))
  const rowNotAsked = notAsked.filter(k => own.has(k))
  return { asked: new Set(group.questions.map(q => q.key).filter(k => !rowNotAsked.includes(k))), notAsked: rowNotAsked }
}

/** The issues of every row's conditions: a hidden question answered, or an asked required one left empty. */
export function rowIssues(questions: readonly AskableQuestion[], groups: readonly RowGroup[], answers: Record<string, unknown>): Array<{ path: Array<string | number>, message: string }> {
  const issues: Array<{ path: Array<string | number>, message: string }> = []
  for (const g of groups) {
    if (!g.questions.some(q => q.askWhen)) continue
    rowsOf(answers, g.key).forEach((row, i) => {
      const { notAsked } = rowAsking(questions, g, answers, row)
      for (const q of g.questions) {
        if (!q.askWhen) continue
        const value = ownValue(row, q.key)
        if (notAsked.includes(q.key)) {
          if (!isNoAnswer(value)) issues.push({ path: [g.key, i, q.key], message: `Not asked for this row (asked only when ${conditionText(q.askWhen, [...questions, ...g.questions])}): leave it empty` })
        }
        else if (q.required && isNoAnswer(value)) issues.push({ path: [g.key, i, q.key], message: REQUIRED })
      }
    })
  }
  return issues
}

/** The answers with each row's hidden answers removed (what the tablet keeps when a row question becomes hidden). */
export function rowsWithoutNotAsked(questions: readonly AskableQuestion[], groups: readonly AskableGroup[], answers: Record<string, unknown>): Record<string, unknown> {
  let out = answers
  for (const g of groups) {
    const rows = rowsOf(answers, g.key)
    if (!rows.length || !g.questions.some(q => q.askWhen)) continue
    let changed = false
    const kept = rows.map((row) => {
      const { notAsked } = rowAsking(questions, g, answers, row)
      const drop = notAsked.filter(k => !isNoAnswer(ownValue(row, k)))
      if (!drop.length) return row
      changed = true
      return Object.fromEntries(Object.entries(row).filter(([k]) => !drop.includes(k)))
    })
    if (changed) out = { ...out, [g.key]: kept }
  }
  return out
}
