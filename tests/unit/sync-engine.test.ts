import 'fake-indexeddb/auto'
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest'
import { FieldDatabase, type LocalVisit } from '../../app/utils/field-db'
import { OfflineError, ServerBusyError, SessionExpiredError, fetchSetupAhead, retryAfterMsOf, syncOnce } from '../../app/utils/sync-engine'

// The tablet's sync pass against a scripted server: what leaves the queue, and when.
let db: FieldDatabase
let n = 0
const SETUP = { rounds: [], villages: [], questionnaires: [], fetchedAt: '2026-11-20T08:00:00.000Z' }

function localVisit(overrides: Partial<LocalVisit> = {}): LocalVisit {
  const id = `00000000-0000-4000-8000-${String(++n).padStart(12, '0')}`
  return {
    id, roundId: 1, villageId: 2, questionnaireVersionId: 3, farmCode: `F-${n}`,
    location: { kind: 'gps', lat: 1, lon: 2, accuracyM: 5 }, answers: { adopted: true }, consent: true,
    consentAt: '2026-11-20T08:00:00.000Z', startedAt: '2026-11-20T08:00:00.000Z', savedAt: '2026-11-20T08:15:00.000Z',
    baseVersion: 0, state: 'queued', reviewState: null, reviewReason: null, errors: null, serverCopy: null,
    updatedAt: '2026-11-20T08:15:00.000Z', syncedAt: null, ...overrides
  }
}

type Route = (init: RequestInit | undefined, url: string) => Response | Promise<Response>
function server(routes: Record<string, Route>) {
  const calls: string[] = []
  vi.stubGlobal('fetch', vi.fn(async (url: string, init?: RequestInit) => {
    const key = `${init?.method ?? 'GET'} ${url.split('?')[0]}`
    calls.push(key)
    const route = routes[key] ?? (key.startsWith('PUT /api/photos/') ? routes['PUT /api/photos'] : undefined)
    if (!route) throw new TypeError('Failed to fetch')
    return route(init, url)
  }))
  return calls
}
const json = (body: unknown, status = 200) => new Response(JSON.stringify(body), { status, headers: { 'content-type': 'application/json' } })
const states = () => json({ visits: [], at: '2026-11-20T09:00:00.000Z' })
const stored = (init?: RequestInit) => {
  const { visits } = JSON.parse(String(init!.body)) as { visits: Array<{ id: string }> }
  return json({ results: visits.map(v => ({ id: v.id, status: 'stored', version: 1 })), counts: {} })
}

beforeEach(() => {
  db = new FieldDatabase(`test-${Math.random()}`)
})
afterEach(async () => {
  vi.unstubAllGlobals()
  await db.delete()
})

describe('the sync pass', () => {
  it('marks visits synced only after the server confirmed them, keeping the device copy', async () => {
    const visits = [localVisit(), localVisit(), localVisit({ state: 'draft' })]
    await db.visits.bulkAdd(visits)
    const calls = server({ 'GET /api/field/setup': () => json(SETUP), 'POST /api/sync/visits': stored, 'GET /api/sync/visits': states })
    const summary = await syncOnce(db)
    expect(summary).toMatchObject({ sent: 2, stored: 2 })
    expect((await db.visits.toArray()).map(v => v.state).sort()).toEqual(['draft', 'synced', 'synced'])
    expect(calls).toEqual(['GET /api/field/setup', 'POST /api/sync/visits', 'GET /api/sync/visits'])
    expect((await db.cache.get('lastSyncAt'))?.value).toBeTruthy()
  })

  it('keeps the queue untouched when the answer never arrives, and when the session has ended', async () => {
    await db.visits.bulkAdd([localVisit(), localVisit()])
    server({ 'GET /api/field/setup': () => json(SETUP) })
    await expect(syncOnce(db)).rejects.toBeInstanceOf(OfflineError)
    expect((await db.visits.toArray()).every(v => v.state === 'queued')).toBe(true)
    server({ 'GET /api/field/setup': () => json(SETUP), 'POST /api/sync/visits': () => json({ message: 'Sign in to continue.' }, 401) })
    await expect(syncOnce(db)).rejects.toBeInstanceOf(SessionExpiredError)
    expect((await db.visits.toArray()).every(v => v.state === 'queued')).toBe(true)
    expect(await db.cache.get('lastSyncAt')).toBeUndefined()
  })

  it('records rejections and conflicts (with the server copy) per visit', async () => {
    const [a, b, c] = [localVisit(), localVisit(), localVisit()]
    await db.visits.bulkAdd([a, b, c])
    const serverCopy = { id: b.id, roundId: 1, villageId: 2, questionnaireVersionId: 3, farmCode: b.farmCode, answers: { adopted: false }, reviewState: 'received', reviewReason: null, version: 2, updatedAt: '2026-11-20T09:00:00.000Z' }
    server({
      'GET /api/field/setup': () => json(SETUP),
      'POST /api/sync/visits': () => json({ results: [
        { id: a.id, status: 'rejected', errors: { 'answers.farm_size_ha': 'At most 50 ha' } },
        { id: b.id, status: 'conflict', version: 2, server: serverCopy },
        { id: c.id, status: 'duplicate', version: 1 }
      ], counts: {} }),
      'GET /api/sync/visits': states
    })
    await syncOnce(db)
    expect(await db.visits.get(a.id)).toMatchObject({ state: 'rejected', errors: { 'answers.farm_size_ha': 'At most 50 ha' } })
    expect(await db.visits.get(b.id)).toMatchObject({ state: 'conflict', serverCopy: { version: 2, answers: { adopted: false } } })
    expect(await db.visits.get(c.id)).toMatchObject({ state: 'synced', baseVersion: 1 })
  })

  it('leaves a visit edited while its batch was in flight in the queue', async () => {
    const v = localVisit()
    await db.visits.add(v)
    server({
      'GET /api/field/setup': () => json(SETUP),
      'POST /api/sync/visits': async (init) => {
        await db.visits.update(v.id, { farmCode: 'EDITED', updatedAt: '2026-11-20T08:20:00.000Z' })
        return stored(init)
      },
      'GET /api/sync/visits': states
    })
    await syncOnce(db)
    expect(await db.visits.get(v.id)).toMatchObject({ state: 'queued', farmCode: 'EDITED' })
  })

  it('sends photos only after their visit reached the server, and marks sent-back visits from the review states', async () => {
    const synced = localVisit({ state: 'synced', syncedAt: '2026-11-20T08:30:00.000Z', baseVersion: 1 })
    const waiting = localVisit({ state: 'draft' })
    await db.visits.bulkAdd([synced, waiting])
    const blob = new Blob([new Uint8Array([1, 2, 3])], { type: 'image/jpeg' })
    await db.photos.bulkAdd([
      { id: 'p1', visitId: synced.id, blob, contentType: 'image/jpeg', size: 3, sha256: 'a'.repeat(64), state: 'waiting', createdAt: '' },
      { id: 'p2', visitId: waiting.id, blob, contentType: 'image/jpeg', size: 3, sha256: 'b'.repeat(64), state: 'waiting', createdAt: '' }
    ])
    const calls = server({
      'GET /api/field/setup': () => json(SETUP),
      'PUT /api/photos': () => json({ status: 'stored' }),
      'GET /api/sync/visits': () => json({ visits: [{ ...synced, answers: { adopted: false }, reviewState: 'sent_back', reviewReason: 'Check the outcome', version: 2 }], at: '2026-11-20T09:00:00.000Z' })
    })
    await syncOnce(db)
    expect(calls.filter(c => c.startsWith('PUT'))).toEqual(['PUT /api/photos/p1'])
    expect((await db.photos.get('p1'))!.state).toBe('uploaded')
    expect((await db.photos.get('p2'))!.state).toBe('waiting')
    expect(await db.visits.get(synced.id)).toMatchObject({ state: 'sent_back', reviewReason: 'Check the outcome', baseVersion: 2, answers: { adopted: false } })
  })

  it('treats 503 and 429 as a busy server: the queue stays, and the wait is the server\'s Retry-After', async () => {
    await db.visits.bulkAdd([localVisit(), localVisit()])
    const busy = (status: number, retryAfter: string) => () => new Response(JSON.stringify({ message: 'busy' }), { status, headers: { 'content-type': 'application/json', 'retry-after': retryAfter } })
    server({ 'GET /api/field/setup': () => json(SETUP), 'POST /api/sync/visits': busy(503, '7') })
    const unavailable = await syncOnce(db).catch((e: unknown) => e)
    expect(unavailable).toBeInstanceOf(ServerBusyError)
    expect(unavailable).toMatchObject({ status: 503, retryAfterMs: 7000, message: 'Server busy, will retry.' })
    server({ 'GET /api/field/setup': busy(429, '2') })
    await expect(syncOnce(db)).rejects.toMatchObject({ name: 'ServerBusyError', status: 429, retryAfterMs: 2000 })
    expect((await db.visits.toArray()).every(v => v.state === 'queued')).toBe(true)
    expect(await db.cache.get('lastSyncAt')).toBeUndefined()
    // The next pass, once the server is back, sends them.
    server({ 'GET /api/field/setup': () => json(SETUP), 'POST /api/sync/visits': stored, 'GET /api/sync/visits': states })
    expect(await syncOnce(db)).toMatchObject({ sent: 2, stored: 2 })
  })

  it('reads Retry-After as seconds or as a date, and waits 5 s without one', () => {
    const now = Date.parse('2026-11-20T09:00:00.000Z')
    expect(retryAfterMsOf('3', now)).toBe(3000)
    expect(retryAfterMsOf('Fri, 20 Nov 2026 09:00:30 GMT', now)).toBe(30_000)
    expect(retryAfterMsOf(null, now)).toBe(5000)
    expect(retryAfterMsOf('soon', now)).toBe(5000)
  })
})

describe('a new tablet\'s setup fetched ahead', () => {
  const AHEAD = { ...SETUP, fetchedAt: '2026-11-20T07:59:00.000Z' }
  const outcome = { roundId: 1, villageId: 2, farmCode: 'F-9', outcome: 'refused', note: 'Not at home twice', recordedAt: '2026-11-20T08:10:00.000Z' }

  it('is stored by the first pass instead of asking again', async () => {
    let setups = 0
    const calls = server({ 'GET /api/field/setup': () => json(++setups === 1 ? AHEAD : SETUP), 'GET /api/sync/visits': states })
    fetchSetupAhead(db.name)
    await syncOnce(db)
    expect(calls).toEqual(['GET /api/field/setup', 'GET /api/sync/visits'])
    expect((await db.cache.get('setup'))?.value).toEqual(AHEAD)
    // Taken once: the next pass asks the server.
    await syncOnce(db)
    expect(calls.filter(c => c === 'GET /api/field/setup')).toHaveLength(2)
    expect((await db.cache.get('setup'))?.value).toEqual(SETUP)
  })

  it('is read again after non-interviews were sent, so it shows them as the server holds them', async () => {
    await db.cache.put({ key: 'sampleOutcomes', value: [outcome] })
    let setups = 0
    const calls = server({
      'GET /api/field/setup': () => json(++setups === 1 ? AHEAD : SETUP),
      'POST /api/field/sample-outcomes': () => json({ results: [{ index: 0, status: 'stored' }] }),
      'GET /api/sync/visits': states
    })
    fetchSetupAhead(db.name)
    await syncOnce(db)
    expect(calls).toEqual(['GET /api/field/setup', 'POST /api/field/sample-outcomes', 'GET /api/field/setup', 'GET /api/sync/visits'])
    expect((await db.cache.get('setup'))?.value).toEqual(SETUP)
  })

  it('is never given to another person\'s store', async () => {
    let setups = 0
    const calls = server({ 'GET /api/field/setup': () => json(++setups === 1 ? AHEAD : SETUP), 'GET /api/sync/visits': states })
    fetchSetupAhead('furrowcast-field-someone-else')
    await syncOnce(db)
    expect(calls).toEqual(['GET /api/field/setup', 'GET /api/field/setup', 'GET /api/sync/visits'])
    expect((await db.cache.get('setup'))?.value).toEqual(SETUP)
  })
})
