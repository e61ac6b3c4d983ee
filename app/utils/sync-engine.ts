import type { FieldSetup, VisitStates } from '#shared/types/field'
import type { SyncAnswer } from '#shared/utils/schemas/visit'
import type { FieldDatabase, LocalVisit } from './field-db'
import { pushSampleOutcomes } from './sample-sync'

// One sync pass: fetch the round definitions, send queued visits in batches, upload photos of synced visits,
// then read back review states (sent back, accepted). A visit leaves the queue only on the server's word.

export class SessionExpiredError extends Error {
  constructor() {
    super('Your session has ended. Sign in again to send your visits; they are kept on this tablet.')
    this.name = 'SessionExpiredError'
  }
}

export class OfflineError extends Error {
  constructor() {
    super('No connection to the server.')
    this.name = 'OfflineError'
  }
}

/**
 * The server answered 503 (database restarting, busy) or 429 (too many requests from this account): nothing is
 * wrong with the visits, the pass stops and tries again after `retryAfterMs` (the server's Retry-After).
 */
export class ServerBusyError extends Error {
  constructor(readonly status: number, readonly retryAfterMs: number) {
    super('Server busy, will retry.')
    this.name = 'ServerBusyError'
  }
}

/** Retry-After as seconds or an HTTP date; 5 s when absent or unreadable. */
export function retryAfterMsOf(header: string | null, now = Date.now()): number {
  if (header) {
    const seconds = Number(header)
    if (Number.isFinite(seconds) && seconds >= 0) return seconds * 1000
    const at = Date.parse(header)
    if (Number.isFinite(at)) return Math.max(0, at - now)
  }
  return 5_000
}

export interface SyncProgress { phase: 'setup' | 'visits' | 'photos' | 'states', done: number, total: number }
export interface SyncSummary { sent: number, stored: number, conflicts: number, rejected: number, photos: number, erased: number }

const DEVICE_BATCH = 200

async function call(url: string, init?: RequestInit): Promise<Response> {
  let response: Response
  try {
    response = await fetch(url, { credentials: 'same-origin', ...init, headers: { accept: 'application/json', ...init?.headers } })
  }
  catch {
    throw new OfflineError()
  }
  if (response.status === 401) throw new SessionExpiredError()
  if (response.status === 503 || response.status === 429) throw new ServerBusyError(response.status, retryAfterMsOf(response.headers.get('retry-after')))
  return response
}

async function json<T>(url: string, init?: RequestInit): Promise<T> {
  const response = await call(url, init)
  if (!response.ok && response.status !== 422) throw new Error(`The server answered ${response.status} to ${url}.`)
  return response.json() as Promise<T>
}

export function payloadOf(v: LocalVisit) {
  return {
    id: v.id,
    roundId: v.roundId,
    villageId: v.villageId,
    questionnaireVersionId: v.questionnaireVersionId,
    baseVersion: v.baseVersion,
    farmCode: v.farmCode,
    location: v.location,
    answers: v.answers,
    consent: v.consent,
    consentAt: v.consentAt,
    startedAt: v.startedAt,
    savedAt: v.savedAt
  }
}

// A new tablet's first setup, asked for while its owner chooses the PIN: the first pass after the PIN takes it
// instead of asking again, so the answer (70 KB of JSON in the demo) is not fetched only once the key has been
// stretched (on a rural link that was half a second before the first visit could start). Held in this page's memory
// only, for one person's store (by its name), and for EARLY_SETUP_MS at most.
const EARLY_SETUP_MS = 30_000
let early: { store: string, at: number, answer: Promise<FieldSetup> } | null = null

const earlyAnswerOf = (store: string) => early?.store === store && Date.now() - early.at < EARLY_SETUP_MS ? early.answer : null

export function fetchSetupAhead(store: string) {
  if (earlyAnswerOf(store)) return
  const answer = json<FieldSetup>('/api/field/setup')
  // A failure here is met again by the pass's own request.
  answer.catch(() => {})
  early = { store, at: Date.now(), answer }
}

/** Takes the setup fetched ahead for this store, if any (once: the next pass asks the server). */
function earlySetupFor(store: string): Promise<FieldSetup> | null {
  const taken = earlyAnswerOf(store)
  early = null
  return taken
}

async function storeSetup(db: FieldDatabase, setup: FieldSetup): Promise<FieldSetup> {
  await db.cache.put({ key: 'setup', value: setup })
  if (!(await db.cache.get('statesSince'))) await db.cache.put({ key: 'statesSince', value: setup.fetchedAt })
  return setup
}

export async function refreshSetup(db: FieldDatabase): Promise<FieldSetup> {
  return storeSetup(db, await json<FieldSetup>('/api/field/setup'))
}

async function pushVisits(db: FieldDatabase, summary: SyncSummary, progress: (p: SyncProgress) => void) {
  const queued = await db.visits.where('state').equals('queued').toArray()
  for (let i = 0; i < queued.length; i += DEVICE_BATCH) {
    const batch = queued.slice(i, i + DEVICE_BATCH)
    progress({ phase: 'visits', done: i, total: queued.length })
    const answer = await json<SyncAnswer>('/api/sync/visits', {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ visits: batch.map(payloadOf) })
    })
    summary.sent += batch.length
    const now = new Date().toISOString()
    await db.transaction('rw', db.visits, db.photos, async () => {
      for (const result of answer.results) {
        const local = batch.find(v => v.id === result.id)
        if (local && result.status === 'erased') {
          // The farmer withdrew consent and the farm's data was erased: this copy goes, whatever its state.
          summary.erased++
          await dropLocalCopies(db, [local.id])
          continue
        }
        // Only a copy unchanged since it was sent may be marked: an edit made meanwhile stays queued.
        if (!local) continue
        const current = await db.visits.get(local.id)
        if (!current || current.updatedAt !== local.updatedAt) continue
        if (result.status === 'stored' || result.status === 'duplicate') {
          summary.stored++
          await db.visits.update(local.id, { state: 'synced', baseVersion: result.version ?? local.baseVersion, errors: null, serverCopy: null, syncedAt: now, reviewState: current.reviewState === 'sent_back' ? 'received' : current.reviewState ?? 'received', reviewReason: null })
        }
        else if (result.status === 'conflict') {
          summary.conflicts++
          await db.visits.update(local.id, { state: 'conflict', serverCopy: result.server ?? null })
        }
        else {
          summary.rejected++
          await db.visits.update(local.id, { state: 'rejected', errors: result.errors ?? { _: 'Refused by the server' } })
        }
      }
    })
  }
  progress({ phase: 'visits', done: queued.length, total: queued.length })
}

async function pushPhotos(db: FieldDatabase, summary: SyncSummary, progress: (p: SyncProgress) => void) {
  const waiting = await db.photos.where('state').equals('waiting').toArray()
  const visits = new Map((await db.visits.bulkGet(waiting.map(p => p.visitId))).filter(Boolean).map(v => [v!.id, v!]))
  // A photo goes only after its visit reached the server.
  const ready = waiting.filter(p => (visits.get(p.visitId)?.syncedAt ?? null) !== null)
  for (const [i, photo] of ready.entries()) {
    progress({ phase: 'photos', done: i, total: ready.length })
    const response = await call(`/api/photos/${photo.id}?visitId=${photo.visitId}&sha256=${photo.sha256}`, {
      method: 'PUT',
      headers: { 'content-type': photo.contentType },
      body: photo.blob
    })
    if (response.ok) {
      await db.photos.update(photo.id, { state: 'uploaded' })
      summary.photos++
    }
    else if (response.status >= 500) {
      throw new Error(`The server could not store a photo (${response.status}); it will be retried.`)
    }
  }
}

/** Deletes visits and their photos from this tablet (an erasure on request reached it). */
export async function dropLocalCopies(db: FieldDatabase, visitIds: string[]): Promise<number> {
  if (!visitIds.length) return 0
  const held = (await db.visits.bulkGet(visitIds)).filter(Boolean).length
  await db.photos.where('visitId').anyOf(visitIds).delete()
  await db.visits.bulkDelete(visitIds)
  return held
}

async function pullStates(db: FieldDatabase, summary: SyncSummary) {
  const since = (await db.cache.get('statesSince'))?.value as string | undefined
  const states = await json<VisitStates>(`/api/sync/visits${since ? `?since=${encodeURIComponent(since)}` : ''}`)
  await db.transaction('rw', db.visits, db.photos, db.cache, async () => {
    // Erased at the farmer's request: the copy goes whatever its local state, edits and unsent photos included.
    summary.erased += await dropLocalCopies(db, states.erased ?? [])
    for (const server of states.visits) {
      const local = await db.visits.get(server.id)
      if (!local || local.state === 'queued' || local.state === 'draft' || local.state === 'conflict') continue
      if (server.version < local.baseVersion) continue
      const sentBack = server.reviewState === 'sent_back'
      await db.visits.update(server.id, {
        state: sentBack ? 'sent_back' : 'synced',
        reviewState: server.reviewState,
        reviewReason: server.reviewReason,
        baseVersion: server.version,
        // A coordinator's correction wins: the device shows the server's answers.
        answers: server.answers,
        farmCode: server.farmCode
      })
    }
    // Overlap by a minute so that a change committed while we read is not missed.
    await db.cache.put({ key: 'statesSince', value: new Date(Date.parse(states.at) - 60_000).toISOString() })
  })
}

export async function syncOnce(db: FieldDatabase, progress: (p: SyncProgress) => void = () => {}): Promise<SyncSummary> {
  const summary: SyncSummary = { sent: 0, stored: 0, conflicts: 0, rejected: 0, photos: 0, erased: 0 }
  progress({ phase: 'setup', done: 0, total: 1 })
  // A new tablet's setup fetched ahead is stored first, so the field page can offer a visit at once. Then the
  // non-interviews of listed farms, before the setup is read, so that it shows them as the server holds them.
  const ahead = await earlySetupFor(db.name)?.catch(() => null)
  if (ahead) await storeSetup(db, ahead)
  const outcomesSent = await pushSampleOutcomes(db, call)
  // The setup read after the outcomes shows them as the server holds them: asked for again if any were sent.
  if (!ahead || outcomesSent > 0) await refreshSetup(db)
  await pushVisits(db, summary, progress)
  await pushPhotos(db, summary, progress)
  progress({ phase: 'states', done: 0, total: 1 })
  await pullStates(db, summary)
  await db.cache.put({ key: 'lastSyncAt', value: new Date().toISOString() })
  return summary
}
