import { z } from 'zod'
import { safeText } from './safe-text'
import { farmCodeSchema } from './visit'

export const REVIEW_SORTS = ['savedAt', 'farmCode', 'village', 'enumerator', 'reviewState'] as const

export const reviewQuerySchema = z.object({
  roundId: z.coerce.number().int().positive().optional(),
  villageId: z.coerce.number().int().positive().optional(),
  enumeratorId: z.coerce.number().int().positive().optional(),
  state: z.enum(['received', 'accepted', 'sent_back']).optional(),
  from: z.iso.date().optional(),
  to: z.iso.date().optional(),
  flagged: z.enum(['1', '0']).optional(),
  /** Part of a farm code, any case. */
  farm: z.string().trim().max(64).optional(),
  sort: z.enum(REVIEW_SORTS).default('savedAt'),
  dir: z.enum(['asc', 'desc']).default('desc'),
  page: z.coerce.number().int().min(1).max(100_000).default(1),
  pageSize: z.coerce.number().int().min(5).max(100).default(25)
})
export type ReviewQuery = z.infer<typeof reviewQuerySchema>

// Built under a local name: a top-level `export const x = z.fn(…, [` confuses the auto-import scanner.
const reviewActions = z.discriminatedUnion('action', [
  z.object({ action: z.literal('accept') }),
  z.object({ action: z.literal('send_back'), reason: safeText(z.string().trim().min(3, 'Say what the enumerator should fix').max(500), { multiline: true }) }),
  z.object({
    action: z.literal('correct'),
    answers: z.record(z.string(), z.unknown()).refine(a => Object.keys(a).length > 0, 'Change at least one answer'),
    reason: safeText(z.string().trim().min(3, 'Say why you correct this').max(500), { multiline: true })
  }),
  // A mistyped farm code: the visit is linked again to the registered farm of the corrected code (farm-register.ts).
  z.object({
    action: z.literal('farm_code'),
    farmCode: farmCodeSchema,
    reason: safeText(z.string().trim().min(3, 'Say why you correct this').max(500), { multiline: true })
  })
], { error: 'Choose accept, send_back, correct or farm_code' })
export const reviewActionSchema = reviewActions
export type ReviewAction = z.infer<typeof reviewActionSchema>

/** Accept every visit of a round still to review that has no flag (within the page's filters), after confirming a count. */
export const bulkAcceptSchema = z.object({
  roundId: z.number().int().positive(),
  villageId: z.number().int().positive().optional(),
  enumeratorId: z.number().int().positive().optional(),
  farm: z.string().trim().max(64).optional(),
  /** The count the coordinator confirmed: refused if the list changed in between. */
  count: z.number().int().min(1).max(100_000)
})
export type BulkAccept = z.infer<typeof bulkAcceptSchema>
