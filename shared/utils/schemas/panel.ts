import { z } from 'zod'
import { COORDINATE_PRECISIONS } from './privacy'
import { safeText } from './safe-text'

/** Several rounds at once: at most this many (round labels sort as "1. …" to "9. …"). */
export const MAX_PANEL_ROUNDS = 9

/** Round ids as a query parameter: "4,7". */
const roundList = z.string().trim().regex(/^\d{1,9}(,\d{1,9}){0,8}$/, 'Give the other rounds as ids separated by commas')
  .transform(s => [...new Set(s.split(',').map(Number))])

/**
 * The panel export: the accepted visits of this round and the `with` rounds, one row per registered farm × round.
 * Pseudonymised by default, like the visits export; identifying only with a stated reason (audited).
 */
export const panelExportQuerySchema = z.object({
  with: roundList,
  part: z.enum(['all', 'panel']).default('all'),
  identifying: z.enum(['0', '1']).default('0'),
  reason: safeText(z.string().trim().max(500), { multiline: true }).optional(),
  precision: z.enum(COORDINATE_PRECISIONS).default('2')
}).superRefine((q, ctx) => {
  if (q.identifying === '1' && (q.reason ?? '').length < 10) {
    ctx.addIssue({ code: 'custom', path: ['reason'], message: 'Say why you need farm codes and exact positions (at least 10 characters)' })
  }
})
export type PanelExportQuery = z.infer<typeof panelExportQuerySchema>

/** The model builder's "several rounds together": the other rounds and how the rounds enter the model. */
export const severalRoundsSchema = z.object({
  /** The other rounds (the request's own round is always one of them). */
  roundIds: z.array(z.number().int().positive()).min(1, 'Choose at least one other round').max(MAX_PANEL_ROUNDS - 1),
  /**
   * 'pooled': one model over all visits with an adoption level per round (round effects), villages as clusters.
   * 'farm-effects': a farm random intercept with the farm means of the characteristics that change between rounds
   * (correlated random effects), probit or logit.
   */
  model: z.enum(['pooled', 'farm-effects']).default('pooled')
})
export type SeveralRounds = z.infer<typeof severalRoundsSchema>

export const SEVERAL_ROUNDS_LABELS: Record<SeveralRounds['model'], { label: string, explain: string }> = {
  'pooled': {
    label: 'All visits together, each round with its own adoption level',
    explain: 'One model over the visits of every round chosen; the round effects show how adoption moved between rounds for farms alike in the chosen characteristics.'
  },
  'farm-effects': {
    label: 'Follow each farm: its own level, with its averages over the rounds',
    explain: 'A farm random effect for farms seen in several rounds, with each farm\'s average of the characteristics that change between rounds added (correlated random effects), so the other figures compare a farm with itself over time (probit or logit only).'
  }
}
