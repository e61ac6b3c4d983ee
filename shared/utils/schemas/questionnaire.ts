import { z } from 'zod'
import { checkDefinitionProblems } from '../answer-checks'
import { conditionProblems } from '../asking'
import { answerCheckSchema } from './checks'
import { conditionSchema } from './conditions'
import { languagesSchema, translationsSchema } from './languages'
import { translationProblems } from '../translation'
import { groupDefinitionProblems, groupSchemaOf } from './groups'
import { isReservedKey, safeText } from './safe-text'

// A questionnaire is a list of typed questions; one version of it yields one zod schema for a visit,
// used by the tablet's form and by the sync route alike (visitSchemaFor).

export const QUESTION_TYPES = ['number', 'whole', 'yesno', 'choice', 'several', 'date', 'text'] as const
export type QuestionType = typeof QUESTION_TYPES[number]

export const QUESTION_TYPE_LABELS: Record<QuestionType, string> = {
  number: 'Number (with unit)',
  whole: 'Whole number',
  yesno: 'Yes / no',
  choice: 'One of a list',
  several: 'Several of a list',
  date: 'Date',
  text: 'Short text'
}

/** The adoption outcome: present in every questionnaire, always a required yes/no. */
export const OUTCOME_KEY = 'adopted'

const key = z.string().trim().regex(/^[a-z][a-z0-9_]{0,39}$/, 'Use 1–40 lower-case letters, digits or _, starting with a letter')
  .refine(k => !isReservedKey(k), 'This key is reserved; choose another name')
const label = safeText(z.string().trim().min(1, 'Give the question a label').max(200))

const common = {
  key,
  label,
  help: safeText(z.string().trim().max(500), { multiline: true }).optional(),
  required: z.boolean().default(false),
  /** Asked only when earlier answers pass this condition; otherwise stored as "not asked". Absent: always asked. */
  askWhen: conditionSchema.optional()
}
const bounds = {
  min: z.number().finite().optional(),
  max: z.number().finite().optional()
}

const options = z.array(z.object({
  value: z.string().trim().regex(/^[a-z0-9_]{1,40}$/, 'Option codes are 1–40 lower-case letters, digits or _')
    .refine(v => !isReservedKey(v), 'This code is reserved; choose another'),
  label: safeText(z.string().trim().min(1, 'Give the option a label').max(120))
})).min(2, 'List at least two options').max(50)

// Built under a local name: a top-level `export const x = z.fn(…, [` confuses the auto-import scanner.
const questionVariants = z.discriminatedUnion('type', [
  z.object({ ...common, type: z.literal('number'), unit: safeText(z.string().trim().max(20)).optional(), ...bounds }),
  z.object({ ...common, type: z.literal('whole'), unit: safeText(z.string().trim().max(20)).optional(), ...bounds }),
  z.object({ ...common, type: z.literal('yesno') }),
  z.object({ ...common, type: z.literal('choice'), options }),
  // The answer is a list of option codes (none, one or several); exports give one 0/1 column per option.
  z.object({ ...common, type: z.literal('several'), options }),
  z.object({ ...common, type: z.literal('date') }),
  z.object({ ...common, type: z.literal('text'), maxLength: z.number().int().min(1).max(500).default(120) })
]).superRefine((q, ctx) => {
  if ((q.type === 'number' || q.type === 'whole') && q.min !== undefined && q.max !== undefined && q.min >= q.max) {
    ctx.addIssue({ code: 'custom', path: ['max'], message: 'The maximum must be above the minimum' })
  }
  if (q.type === 'choice' || q.type === 'several') {
    const seen = new Set<string>()
    q.options.forEach((o, j) => {
      if (seen.has(o.value)) ctx.addIssue({ code: 'custom', path: ['options', j, 'value'], message: `The option code "${o.value}" is used twice in "${q.label}"; give each option its own code` })
      seen.add(o.value)
    })
  }
})
export const questionSchema = questionVariants
export type Question = z.infer<typeof questionSchema>
export type QuestionInput = z.input<typeof questionSchema>

export const questionnaireDefinitionSchema = z.object({
  questions: z.array(questionSchema).min(1).max(200),
  /** Checks across answers with the coordinator's messages (absent in versions saved before checks existed). */
  checks: z.array(answerCheckSchema).max(50, 'At most 50 checks').optional(),
  /** The languages it is asked in, the main one first (absent: one language, the questions' own texts). */
  languages: languagesSchema.optional(),
  /** Texts of the other languages per question key (shared/utils/translation.ts). */
  translations: translationsSchema.optional(),
  /** Repeated groups (e.g. plots), answered once per row (absent in versions saved before groups existed). */
  groups: z.array(groupSchemaOf(questionSchema)).max(10, 'At most 10 groups').optional()
}).superRefine((d, ctx) => {
  const seen = new Set<string>()
  d.questions.forEach((q, i) => {
    if (seen.has(q.key)) ctx.addIssue({ code: 'custom', path: ['questions', i, 'key'], message: `The key ${q.key} is used twice` })
    seen.add(q.key)
  })
  const outcome = d.questions.find(q => q.key === OUTCOME_KEY)
  if (!outcome || outcome.type !== 'yesno' || !outcome.required) {
    ctx.addIssue({ code: 'custom', path: ['questions'], message: `The adoption question (${OUTCOME_KEY}, a required yes/no) must be present` })
  }
  if (outcome?.askWhen) ctx.addIssue({ code: 'custom', path: ['questions', d.questions.indexOf(outcome), 'askWhen'], message: 'The adoption question is asked at every farm: it cannot have a condition' })
  for (const p of conditionProblems(d.questions)) ctx.addIssue({ code: 'custom', path: p.path, message: p.message })
  for (const p of checkDefinitionProblems(d.questions, d.checks)) ctx.addIssue({ code: 'custom', path: p.path, message: p.message })
  for (const p of translationProblems(d)) ctx.addIssue({ code: 'custom', path: p.path, message: p.message })
  for (const p of groupDefinitionProblems(d.questions, d.groups, OUTCOME_KEY)) ctx.addIssue({ code: 'custom', path: p.path, message: p.message })
  // Exports add derived columns (key.option, key.asked): two of them with the same name would be ambiguous.
  const columns = new Map<string, string>()
  d.questions.forEach((q, i) => {
    for (const column of exportColumnsOf(q)) {
      const other = columns.get(column)
      if (other !== undefined) ctx.addIssue({ code: 'custom', path: ['questions', i, 'key'], message: `The export column "${column}" would come from both "${other}" and "${q.label}"; change a code` })
      columns.set(column, q.label)
    }
  })
})
export type QuestionnaireDefinition = z.infer<typeof questionnaireDefinitionSchema>
export type QuestionGroup = NonNullable<QuestionnaireDefinition['groups']>[number]

/**
 * The columns a question gets in the visits export: its key (one 0/1 column per option instead for a several-answer
 * question) and, for a question with a condition, `key.asked` (1 asked, 0 not asked). Keys cannot hold a dot, so
 * derived names never meet a question's own key.
 */
export function exportColumnsOf(q: Pick<Question, 'key' | 'type' | 'askWhen'> & { options?: ReadonlyArray<{ value: string }> }): string[] {
  const own = q.type === 'several' ? (q.options ?? []).map(o => `${q.key}.${o.value}`) : [q.key]
  return q.askWhen ? [...own, `${q.key}.asked`] : own
}

export function outcomeQuestion(technology: string): Question {
  return {
    key: OUTCOME_KEY,
    label: `Has this farm adopted ${technology} this season?`,
    help: 'Yes only if the farm used it on some of its land this season.',
    type: 'yesno',
    required: true
  }
}

/** Puts the outcome question in (first) if it is missing, and forces it to a required yes/no. */
export function withOutcomeQuestion(questions: Question[], technology: string): Question[] {
  const rest = questions.filter(q => q.key !== OUTCOME_KEY)
  const existing = questions.find(q => q.key === OUTCOME_KEY)
  const outcome: Question = existing
    ? { key: OUTCOME_KEY, label: existing.label, help: existing.help, type: 'yesno', required: true }
    : outcomeQuestion(technology)
  return [outcome, ...rest]
}

/** A saved version of a round's questionnaire, as the tablet and the server both see it. */
export interface QuestionnaireVersionDto {
  id: number
  roundId: number
  number: number
  definition: QuestionnaireDefinition
}
