import { z } from 'zod'
import { conditionProblems, type AskableQuestion, type DefinitionProblem } from '../asking'
import { isReservedKey, safeText } from './safe-text'

// Repeated groups (e.g. a farm's plots): a group has its own questions, answered once per row; a visit keeps its rows
// in answers[groupKey] as a list of `{ row: <uuid>, <questionKey>: value, … }`. A group holds questions only, never
// another group. Every key (question or group, top-level or inside a group) is unique across the definition.

export const GROUP_ROWS_MAX = 50

/** Builds the group schema around the questionnaire's question schema (passed in: questionnaire.ts imports this file). */
export function groupSchemaOf<Q extends z.ZodType>(question: Q) {
  const nestedMessage = 'A group cannot hold another group (no repeat inside a repeat): add its questions to this group or make a separate group'
  // A question posted with its own list of questions (or of kind "group") is a repeat inside a repeat: name it plainly
  // rather than let the question kinds' union answer with a generic "invalid input".
  const groupQuestion = z.unknown().superRefine((v, ctx) => {
    if (v && typeof v === 'object' && ('questions' in v || 'groups' in v || (v as { type?: unknown }).type === 'group')) {
      ctx.addIssue({ code: 'custom', message: nestedMessage, fatal: true })
    }
  }).pipe(question)
  return z.strictObject({
    key: z.string().trim().regex(/^[a-z][a-z0-9_]{0,39}$/, 'Use 1–40 lower-case letters, digits or _, starting with a letter')
      .refine(k => !isReservedKey(k), 'This key is reserved; choose another name'),
    label: safeText(z.string().trim().min(1, 'Give the group a name').max(200)),
    help: safeText(z.string().trim().max(500), { multiline: true }).optional(),
    questions: z.array(groupQuestion).min(1, 'A group needs at least one question').max(50, 'At most 50 questions per group'),
    minRows: z.number().int().min(0).max(GROUP_ROWS_MAX).optional(),
    maxRows: z.number().int().min(1).max(GROUP_ROWS_MAX).optional()
  }, { error: issue => issue.code === 'unrecognized_keys' ? (issue.keys.includes('groups') ? nestedMessage : `Not a property of a group: ${issue.keys.join(', ')}`) : undefined })
}

/** What the rules below need of a group. */
export interface AskableGroup {
  key: string
  label: string
  questions: readonly AskableQuestion[]
  minRows?: number
  maxRows?: number
}

/**
 * Checks a definition's groups on save: keys unique across the whole definition, rows' bounds in order, the outcome
 * question not inside a group, and each group question's condition refers to an earlier question of its row or to a
 * top-level question (never to another group's question).
 */
export function groupDefinitionProblems(questions: readonly AskableQuestion[], groups: readonly AskableGroup[] | undefined, outcomeKey: string): DefinitionProblem[] {
  if (!groups?.length) return []
  const problems: DefinitionProblem[] = []
  const owner = new Map<string, string>(questions.map(q => [q.key, 'a question']))
  groups.forEach((g, i) => {
    if (owner.has(g.key)) problems.push({ path: ['groups', i, 'key'], message: `The key ${g.key} is used twice: every question and group needs its own key` })
    owner.set(g.key, 'a group')
    g.questions.forEach((q, j) => {
      if (owner.has(q.key)) problems.push({ path: ['groups', i, 'questions', j, 'key'], message: `The key ${q.key} is used twice: every question and group needs its own key` })
      owner.set(q.key, 'a group question')
      if (q.key === 'row') problems.push({ path: ['groups', i, 'questions', j, 'key'], message: 'The key "row" names each row of a group; choose another key' })
      if (q.key === outcomeKey) problems.push({ path: ['groups', i, 'questions', j, 'key'], message: 'The adoption question is asked once per farm: it cannot be inside a group' })
    })
    if (g.minRows !== undefined && g.maxRows !== undefined && g.minRows > g.maxRows) {
      problems.push({ path: ['groups', i, 'maxRows'], message: `"${g.label}": the most rows must be at least the fewest` })
    }
    // The row's conditions are checked as if its questions came after every top-level question: "earlier" then
    // means any top-level question or an earlier question of the row, which is exactly what a row may depend on.
    const top = questions.length
    for (const p of conditionProblems([...questions, ...g.questions])) {
      const at = p.path[1]
      if (typeof at !== 'number' || at < top) continue
      problems.push({ path: ['groups', i, 'questions', at - top, ...p.path.slice(2)], message: p.message })
    }
  })
  return problems
}

/** Every key a definition uses for its groups' questions (so exports and the builder can tell them apart). */
export function groupQuestionKeys(groups: readonly AskableGroup[] | undefined): Set<string> {
  return new Set((groups ?? []).flatMap(g => g.questions.map(q => q.key)))
}

/** Rows of a group as stored in a visit's answers (tolerant: anything else reads as no rows). */
export function rowsOf(answers: Record<string, unknown> | null | undefined, groupKey: string): Array<Record<string, unknown>> {
  const value = answers && Object.prototype.hasOwnProperty.call(answers, groupKey) ? answers[groupKey] : undefined
  return Array.isArray(value) ? value.filter((r): r is Record<string, unknown> => !!r && typeof r === 'object' && !Array.isArray(r)) : []
}
