import { z } from 'zod'
import { failedChecks } from '../answer-checks'
import { askedQuestions, conditionText, isNoAnswer } from '../asking'
import type { AnswerCheck } from './checks'
import { rowIssues, rowsSchemaOf } from './group-rows'
import { OUTCOME_KEY, type Question, type QuestionGroup, type QuestionnaireVersionDto } from './questionnaire'
import { ownValue, safeText } from './safe-text'

// One schema per questionnaire version: what a visit must look like, on the tablet before saving and on the
// server before storing. Answers are in their plain JSON types (numbers, booleans, option values, ISO dates).

export const farmCodeSchema = z.string({ error: 'Enter the farm code' }).trim()
  .min(1, 'Enter the farm code').max(40, 'At most 40 characters')
  .regex(/^[A-Za-z0-9][A-Za-z0-9/_.-]*$/, 'Letters, digits and / _ . - only')

const lat = z.number({ error: 'Latitude must be a number' }).min(-90, 'Latitude is between -90 and 90').max(90, 'Latitude is between -90 and 90')
const lon = z.number({ error: 'Longitude must be a number' }).min(-180, 'Longitude is between -180 and 180').max(180, 'Longitude is between -180 and 180')

// Built under a local name: a top-level `export const x = z.fn(…, [` confuses the auto-import scanner.
const locationForms = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('gps'), lat, lon, accuracyM: z.number().min(0).max(100_000) }),
  z.object({
    kind: z.literal('manual'),
    reason: safeText(z.string({ error: 'Say why there is no GPS fix' }).trim().min(3, 'Say why there is no GPS fix').max(300)),
    lat: lat.optional(),
    lon: lon.optional()
  })
], { error: 'Record a GPS position or enter a reason' })
export const locationSchema = locationForms
export type VisitLocation = z.infer<typeof locationSchema>

const isoInstant = z.iso.datetime({ offset: true, error: 'Expected a date and time' })
const isoDate = z.iso.date({ error: 'Enter a date as YYYY-MM-DD' })

function answerSchema(q: Question): z.ZodType {
  switch (q.type) {
    case 'number':
    case 'whole': {
      let s = z.number({ error: 'Enter a number' })
      if (q.type === 'whole') s = s.int('Enter a whole number')
      if (q.min !== undefined) s = s.min(q.min, `At least ${q.min}${q.unit ? ` ${q.unit}` : ''}`)
      if (q.max !== undefined) s = s.max(q.max, `At most ${q.max}${q.unit ? ` ${q.unit}` : ''}`)
      return s
    }
    case 'yesno':
      return z.boolean({ error: 'Choose yes or no' })
    case 'choice':
      return z.enum(q.options.map(o => o.value) as [string, ...string[]], { error: 'Choose one of the listed answers' })
    case 'several': {
      const codes = q.options.map(o => o.value) as [string, ...string[]]
      return z.array(z.enum(codes, { error: 'Choose among the listed answers' }), { error: 'Tick the answers that apply' })
        .max(codes.length)
        .refine(list => new Set(list).size === list.length, 'An answer is ticked twice')
    }
    case 'date':
      return isoDate
    case 'text':
      return safeText(z.string({ error: 'Enter text' }).trim().min(1, 'Enter an answer').max(q.maxLength, `At most ${q.maxLength} characters`), { multiline: true })
  }
}

const REQUIRED = 'This answer is required'

/**
 * The answers object of one questionnaire: unknown keys are refused, optional answers may be absent or null.
 * Questions with a condition are checked after the shape, with the shared evaluator: a question the condition hides
 * must have no answer (it is "not asked"), and "required" applies only when it is asked.
 */
export function answersSchemaFor(questions: readonly Question[], checks: readonly AnswerCheck[] = [], groups: readonly QuestionGroup[] = []) {
  const shape: Record<string, z.ZodType> = {}
  for (const q of questions) {
    const s = answerSchema(q)
    shape[q.key] = q.required && !q.askWhen
      ? z.unknown().refine(v => !isNoAnswer(v), REQUIRED).pipe(s)
      : s.nullable().optional()
  }
  // A repeated group's rows, each row checked question by question (group-rows.ts).
  for (const g of groups) shape[g.key] = rowsSchemaOf(g, answerSchema)
  const object = z.strictObject(shape, { error: issue => issue.code === 'unrecognized_keys' ? `Not a question of this questionnaire: ${issue.keys.join(', ')}` : 'Answers must be an object' })
  if (!questions.some(q => q.askWhen) && !checks.length && !groups.some(g => g.questions.some(q => q.askWhen))) return object
  // Runs even when another answer has the wrong type, so every hidden answer is named at once.
  return object.check(z.superRefine((answers: Record<string, unknown>, ctx) => {
    if (!answers || typeof answers !== 'object' || Array.isArray(answers)) return
    const { notAsked } = askedQuestions(questions, answers)
    for (const q of questions) {
      if (!q.askWhen) continue
      const value = ownValue(answers, q.key)
      if (notAsked.includes(q.key)) {
        if (!isNoAnswer(value)) ctx.addIssue({ code: 'custom', path: [q.key], message: `Not asked at this farm (asked only when ${conditionText(q.askWhen, questions)}): leave it empty` })
      }
      else if (q.required && isNoAnswer(value)) ctx.addIssue({ code: 'custom', path: [q.key], message: REQUIRED })
    }
    // The coordinator's checks across answers, with their own messages, under the answer checked.
    for (const f of failedChecks(questions, checks, answers)) ctx.addIssue({ code: 'custom', path: [f.question], message: f.message })
    for (const issue of rowIssues(questions, groups, answers)) ctx.addIssue({ code: 'custom', ...issue })
  }, { when: () => true }))
}

/** The keys of the questions these answers leave not asked (what the server stores beside the answers). */
export function notAskedKeys(questions: readonly Question[], answers: Answers): string[] {
  return askedQuestions(questions, answers).notAsked
}

/** The fields every visit has, whatever its questionnaire: enough to route a record to its schema. */
export const visitEnvelopeSchema = z.object({
  id: z.uuid({ error: 'The visit id must be a UUID' }),
  roundId: z.number().int().positive(),
  villageId: z.number({ error: 'Choose the village' }).int().positive(),
  questionnaireVersionId: z.number().int().positive(),
  /** The server version this record was edited from: 0 for a visit the server has never seen. */
  baseVersion: z.number().int().min(0).default(0)
})

const cache = new WeakMap<object, ReturnType<typeof buildVisitSchema>>()

function buildVisitSchema(version: QuestionnaireVersionDto) {
  return visitEnvelopeSchema.extend({
    roundId: z.literal(version.roundId, { error: 'This questionnaire belongs to another round' }),
    questionnaireVersionId: z.literal(version.id, { error: 'Answered with another questionnaire version' }),
    farmCode: farmCodeSchema,
    location: locationSchema,
    answers: answersSchemaFor(version.definition.questions, version.definition.checks, version.definition.groups),
    consent: z.literal(true, { error: 'The farmer\'s informed consent is required' }),
    consentAt: isoInstant,
    startedAt: isoInstant,
    savedAt: isoInstant
  }).strict().superRefine((v, ctx) => {
    if (Date.parse(v.savedAt) < Date.parse(v.startedAt)) ctx.addIssue({ code: 'custom', path: ['savedAt'], message: 'Saved before it was started' })
  })
}

/** ONE zod schema per questionnaire version (memoised per version object). */
export function visitSchemaFor(version: QuestionnaireVersionDto) {
  let schema = cache.get(version)
  if (!schema) {
    schema = buildVisitSchema(version)
    cache.set(version, schema)
  }
  return schema
}

export type VisitInput = z.infer<ReturnType<typeof visitSchemaFor>>
export type Answers = Record<string, unknown>

export function adoptedOf(answers: Answers): 0 | 1 {
  return ownValue(answers, OUTCOME_KEY) === true ? 1 : 0
}

/** The sync envelope: at most 500 records; each record is checked on its own so one bad record spoils nothing else. */
export const SYNC_BATCH_MAX = 500
export const SYNC_BODY_MAX_BYTES = 4 * 1024 * 1024
export const syncBatchSchema = z.object({
  visits: z.array(z.unknown()).min(1, 'Send at least one visit').max(SYNC_BATCH_MAX, `Send at most ${SYNC_BATCH_MAX} visits per batch`)
})

/** erased: the farm's personal data was erased at the farmer's request; the tablet deletes its copy and photos. */
export type SyncStatus = 'stored' | 'duplicate' | 'rejected' | 'conflict' | 'erased'

export interface SyncResult {
  id: string | null
  status: SyncStatus
  version?: number
  errors?: Record<string, string>
  /** On conflict: the server's copy, which wins. */
  server?: ServerVisit
}

export interface ServerVisit {
  id: string
  roundId: number
  villageId: number
  questionnaireVersionId: number
  farmCode: string
  answers: Answers
  reviewState: 'received' | 'accepted' | 'sent_back'
  reviewReason: string | null
  version: number
  updatedAt: string
}

export interface SyncAnswer {
  results: SyncResult[]
  counts: Record<SyncStatus, number>
}
