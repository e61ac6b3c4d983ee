import type { PersonalDataKind, PrivacySettings } from '../utils/schemas/privacy'

/** Where one farm's data lives: shown to the coordinator before an erasure is confirmed. */
export interface FarmFootprint {
  farmCode: string
  visits: number
  /** Rows of the farm on sample lists (names, hints, positions), visited or not. */
  listed: number
  photos: number
  /** How many enumerators' tablets hold visits of the farm. */
  tablets: number
  rounds: Array<{ roundId: number, roundName: string, visits: number, accepted: number }>
  /** A farm with this code was erased before (its visits then carry the opaque id). */
  erasedBefore: { opaqueId: string, at: string } | null
  /** Every place personal data is erased from, in words. */
  sources: string[]
}

export interface ErasureResult {
  opaqueId: string
  visits: number
  photos: number
  rounds: number
  keptAnswers: boolean
  /** Rounds whose model fits are now marked as built on data that has since changed. */
  modelRoundsChanged: number
  /** Items removed per place, by the place's label. */
  removed: Record<string, number>
}

export interface RetentionItem {
  roundId: number
  roundName: string
  kind: PersonalDataKind
  closedAt: string
  /** When the purge is due (closing time + the kind's retention period). */
  dueAt: string
  /** Items still held (photos, positions, identified visits). */
  count: number
}

export interface RetentionReport {
  at: string
  counts: Record<PersonalDataKind, number>
  rounds: number
}

export interface PrivacyView {
  settings: PrivacySettings
  /** What will be purged, soonest first (overdue items are purged at the next check). */
  upcoming: RetentionItem[]
  lastPurge: RetentionReport | null
  /** Minutes between checks (0: the scheduled job is switched off on this server). */
  checkMinutes: number
}
