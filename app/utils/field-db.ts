import Dexie, { type EntityTable } from 'dexie'
import type { FieldSetup } from '#shared/types/field'
import type { ServerVisit, VisitLocation } from '#shared/utils/schemas/visit'
import { sealingMiddleware } from './field-sealing'
import { openKeyOf } from './field-keys'

// The tablet's own database (IndexedDB through Dexie), one per signed-in person: visits, photos as Blobs, and the
// rounds, questionnaires and villages needed to record with no network. The device holds a visit until the
// server has confirmed it; a confirmed visit stays here (state 'synced') so the enumerator still sees it.
// Every record is sealed with the person's data key (field-sealing.ts, field-vault.ts): only the index fields below
// are stored in clear, so an index must never be a farm code, a name or an answer.

/** draft: being written · queued: waiting to sync · synced: the server has it · sent_back / conflict / rejected: needs the enumerator. */
export type LocalState = 'draft' | 'queued' | 'synced' | 'sent_back' | 'conflict' | 'rejected'

export interface LocalVisit {
  id: string
  roundId: number
  villageId: number | null
  questionnaireVersionId: number
  farmCode: string
  location: VisitLocation | null
  answers: Record<string, unknown>
  consent: boolean
  consentAt: string | null
  startedAt: string
  savedAt: string | null
  /** The server version this copy was edited from (0 before the first sync). */
  baseVersion: number
  state: LocalState
  reviewState: ServerVisit['reviewState'] | null
  reviewReason: string | null
  errors: Record<string, string> | null
  /** On conflict: the server's copy, which won; shown beside the device's. */
  serverCopy: ServerVisit | null
  updatedAt: string
  syncedAt: string | null
}

export interface LocalPhoto {
  id: string
  visitId: string
  blob: Blob
  contentType: string
  size: number
  sha256: string
  state: 'waiting' | 'uploaded'
  createdAt: string
}

export interface CacheEntry {
  /** `model:<roundId>`: the round's published model for the planning aid, when switched on. `sampleOutcomes`: the
   * non-interviews recorded on this tablet for listed farms, until the server has them (app/utils/sample-sync.ts). */
  key: 'setup' | 'lastSyncAt' | 'statesSince' | 'sampleOutcomes' | `model:${number}`
  value: unknown
}

export class FieldDatabase extends Dexie {
  visits!: EntityTable<LocalVisit, 'id'>
  photos!: EntityTable<LocalPhoto, 'id'>
  cache!: EntityTable<CacheEntry, 'key'>

  /** `keyOf` gives the open data key (null while locked); without it the records are stored as they are (unit tests). */
  constructor(name: string, keyOf?: () => CryptoKey | null) {
    super(name)
    if (keyOf) this.use(sealingMiddleware(keyOf))
    this.version(1).stores({
      visits: 'id, state, roundId, villageId, updatedAt',
      photos: 'id, visitId, state',
      cache: 'key'
    })
  }

  async setup(): Promise<FieldSetup | null> {
    return ((await this.cache.get('setup'))?.value as FieldSetup | undefined) ?? null
  }
}

const databases = new Map<number, FieldDatabase>()

export const fieldDbName = (userId: number) => `furrowcast-field-${userId}`

/** The field database of one person (a tablet may be shared; each person's queue stays their own). */
export function fieldDb(userId: number): FieldDatabase {
  let db = databases.get(userId)
  if (!db) {
    db = new FieldDatabase(fieldDbName(userId), () => openKeyOf(userId))
    databases.set(userId, db)
  }
  return db
}

/** Closes and forgets a person's store (before it is deleted): the next use opens a fresh one. */
export function closeFieldDb(userId: number) {
  databases.get(userId)?.close()
  databases.delete(userId)
}

export const WAITING_STATES: readonly LocalState[] = ['queued']
export const NEEDS_ATTENTION: readonly LocalState[] = ['sent_back', 'conflict', 'rejected']
