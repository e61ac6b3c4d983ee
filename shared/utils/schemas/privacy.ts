import { z } from 'zod'
import { safeText } from './safe-text'
import { farmCodeSchema } from './visit'

// Farmers' personal data: the organisation's rules (retention, what an erasure keeps), erasure requests and the
// choices of a visit export.

/** The kinds of personal data with a retention period of their own. */
export const PERSONAL_DATA_KINDS = ['photos', 'gps', 'names'] as const
export type PersonalDataKind = typeof PERSONAL_DATA_KINDS[number]

export const PERSONAL_DATA_KIND_LABELS: Record<PersonalDataKind, string> = {
  photos: 'Photos',
  gps: 'GPS points and typed positions',
  names: 'Farm codes, names and free-text answers'
}

const days = z.number({ error: 'Enter a number of days, or leave it empty to keep' }).int('Enter whole days')
  .min(0, 'Use 0 or more days').max(36_500, 'Use at most 36,500 days (100 years)').nullable()

export const privacySettingsSchema = z.object({
  /** After an erasure, keep the farm's non-identifying answers (numbers, yes/no, choices, dates) for aggregates. */
  keepAnswersAfterErasure: z.boolean(),
  /** Days after a round closes that each kind is kept; null keeps it until erased. */
  retentionDays: z.object({ photos: days, gps: days, names: days })
})
export type PrivacySettings = z.infer<typeof privacySettingsSchema>

export const DEFAULT_PRIVACY_SETTINGS: PrivacySettings = {
  keepAnswersAfterErasure: false,
  retentionDays: { photos: null, gps: null, names: null }
}

export const erasureRequestSchema = z.object({
  farmCode: farmCodeSchema,
  reason: safeText(z.string({ error: 'Say why the farm\'s data is erased' }).trim().min(5, 'Say why the farm\'s data is erased (at least 5 characters)').max(500), { multiline: true })
})
export type ErasureRequest = z.infer<typeof erasureRequestSchema>

/** Decimal places kept of latitude and longitude in a pseudonymised export (2 ≈ 1.1 km, 1 ≈ 11 km), or none. */
export const COORDINATE_PRECISIONS = ['none', '0', '1', '2', '3'] as const
export const COORDINATE_PRECISION_LABELS: Record<typeof COORDINATE_PRECISIONS[number], string> = {
  none: 'Leave positions out',
  0: 'Whole degrees (about 110 km)',
  1: '1 decimal (about 11 km)',
  2: '2 decimals (about 1.1 km)',
  3: '3 decimals (about 110 m)'
}

export const visitExportQuerySchema = z.object({
  part: z.enum(['all', 'visits', 'dictionary', 'rows']).default('all'),
  /** With part=rows: the repeated group (e.g. plots) whose rows to export, one line per row. */
  group: z.string().regex(/^[a-z][a-z0-9_]{0,39}$/, 'Name a group of the questionnaire').optional(),
  /** Real farm codes and full positions: only with a stated reason, and audited. */
  identifying: z.enum(['0', '1']).default('0'),
  reason: safeText(z.string().trim().max(500), { multiline: true }).optional(),
  precision: z.enum(COORDINATE_PRECISIONS).default('2')
}).superRefine((q, ctx) => {
  if (q.identifying === '1' && (q.reason ?? '').length < 10) {
    ctx.addIssue({ code: 'custom', path: ['reason'], message: 'Say why you need farm codes and exact positions (at least 10 characters)' })
  }
  if (q.part === 'rows' && !q.group) ctx.addIssue({ code: 'custom', path: ['group'], message: 'Name the group whose rows to export' })
})
export type VisitExportQuery = z.infer<typeof visitExportQuerySchema>
