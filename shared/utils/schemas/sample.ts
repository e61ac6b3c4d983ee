import { z } from 'zod'
import { safeText } from './safe-text'
import { farmCodeSchema } from './visit'

// The sample to visit: per round × village, the drawn farms (rank 0 = main sample, 1..n = replacements in the order
// to use them), how many farms the listing found and the probability that the village was drawn. One schema for the
// coordinator's form, the CSV upload (each row checked with `sampleFarmSchema`) and the route.

/** Why a listed farm was not interviewed, as recorded on the tablet. */
export const SAMPLE_OUTCOMES = ['refused', 'absent', 'moved'] as const
export type SampleOutcome = typeof SAMPLE_OUTCOMES[number]
export const SAMPLE_OUTCOME_LABELS: Record<SampleOutcome, string> = {
  refused: 'Refused',
  absent: 'Nobody at home',
  moved: 'Moved away'
}

/** Most farms one village's list may hold (main sample and replacements together). */
export const SAMPLE_LIST_MAX = 2000
/** Replacements are ranked 1..SAMPLE_RANK_MAX. */
export const SAMPLE_RANK_MAX = 500

const optionalText = (max: number) => safeText(z.string().trim().max(max, `At most ${max} characters`)).optional()
  .transform(v => (v ? v : undefined))

export const sampleFarmSchema = z.object({
  farmCode: farmCodeSchema,
  headName: optionalText(120),
  hint: optionalText(200),
  lat: z.number({ error: 'Latitude must be a number' }).min(-90, 'Latitude is between -90 and 90').max(90, 'Latitude is between -90 and 90').nullable().optional(),
  lon: z.number({ error: 'Longitude must be a number' }).min(-180, 'Longitude is between -180 and 180').max(180, 'Longitude is between -180 and 180').nullable().optional(),
  rank: z.number({ error: 'The rank is a whole number: 0 for the main sample, 1, 2, … for replacements' }).int('The rank is a whole number: 0 for the main sample, 1, 2, … for replacements')
    .min(0, 'The rank is 0 for the main sample, 1, 2, … for replacements').max(SAMPLE_RANK_MAX, `The rank is at most ${SAMPLE_RANK_MAX}`)
}).superRefine((f, ctx) => {
  if ((f.lat === null || f.lat === undefined) !== (f.lon === null || f.lon === undefined)) {
    ctx.addIssue({ code: 'custom', path: [f.lat === null || f.lat === undefined ? 'lat' : 'lon'], message: 'Give both latitude and longitude, or neither' })
  }
})
export type SampleFarmInput = z.infer<typeof sampleFarmSchema>

/** The village's stage-1 facts. Either may be missing while the list is being prepared; weights then say why not. */
export const sampleDesignSchema = z.object({
  listedFarms: z.number({ error: 'The number of farms listed is a whole number' }).int('The number of farms listed is a whole number').min(0, 'The number of farms listed cannot be negative').max(10_000_000).nullable(),
  selectionProbability: z.number({ error: 'The probability is a number between 0 and 1' }).gt(0, 'The probability that the village was drawn is more than 0').max(1, 'A probability is at most 1').nullable()
})

function listProblems(farms: readonly SampleFarmInput[], ctx: z.RefinementCtx, path: string) {
  const seen = new Map<string, number>()
  const ranks = new Map<number, number>()
  farms.forEach((f, i) => {
    const code = f.farmCode.toLowerCase()
    if (seen.has(code)) ctx.addIssue({ code: 'custom', path: [path, i, 'farmCode'], message: `Farm ${f.farmCode} is listed twice` })
    seen.set(code, i)
    if (f.rank > 0) {
      if (ranks.has(f.rank)) ctx.addIssue({ code: 'custom', path: [path, i, 'rank'], message: `Two replacements have rank ${f.rank}: give each its own place in the order` })
      ranks.set(f.rank, i)
    }
  })
  if (farms.length && !farms.some(f => f.rank === 0)) ctx.addIssue({ code: 'custom', path: [path], message: 'The list has no main-sample farm (rank 0)' })
}

export const sampleListSchema = sampleDesignSchema.extend({
  farms: z.array(sampleFarmSchema).max(SAMPLE_LIST_MAX, `At most ${SAMPLE_LIST_MAX} farms per village`)
}).superRefine((list, ctx) => listProblems(list.farms, ctx, 'farms'))
export type SampleListInput = z.infer<typeof sampleListSchema>

/** The upload: the file's text (read in the browser as UTF-8) and the village's facts typed beside it. */
export const sampleUploadSchema = sampleDesignSchema.extend({
  csv: z.string().min(1, 'The file is empty.').max(900_000, 'The file is too large for one village\'s list'),
  fileName: safeText(z.string().trim().max(200)).optional()
})
export type SampleUpload = z.infer<typeof sampleUploadSchema>

export const samplePutSchema = z.union([sampleUploadSchema, sampleListSchema])

/** A non-interview recorded on the tablet, synced by POST /api/field/sample-outcomes. */
export const sampleOutcomeSchema = z.object({
  roundId: z.number().int().positive(),
  villageId: z.number().int().positive(),
  farmCode: farmCodeSchema,
  outcome: z.enum(SAMPLE_OUTCOMES, { error: 'Choose why the farm was not interviewed' }),
  note: safeText(z.string().trim().min(3, 'Say in a few words what happened').max(300, 'At most 300 characters'), { multiline: true }),
  replacedBy: farmCodeSchema.nullable().optional(),
  recordedAt: z.iso.datetime({ offset: true })
})
export type SampleOutcomeRecord = z.infer<typeof sampleOutcomeSchema>
export const sampleOutcomesBodySchema = z.object({ outcomes: z.array(sampleOutcomeSchema).min(1).max(500) })
