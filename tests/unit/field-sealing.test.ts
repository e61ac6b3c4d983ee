import 'fake-indexeddb/auto'
import { afterEach, beforeEach, describe, expect, it } from 'vitest'
import { FieldDatabase, type LocalPhoto, type LocalVisit } from '../../app/utils/field-db'
import { FieldLockedError } from '../../app/utils/field-sealing'
import { decodeRecord, encodeRecord, newDataKey, pinKey, randomBytes, unwrapDataKey, wrapDataKey } from '../../app/utils/field-crypto'
import { delayAfter } from '../../app/utils/field-vault'

// The sealing layer under the field store, on fake-indexeddb (which, like a browser, commits a transaction that
// has nothing pending): every Dexie call the app makes still works, and what IndexedDB holds has no clear text.

let key: CryptoKey | null
let db: FieldDatabase
const FARM = 'KAW-0417'
const NAME = 'Ayodele Marchetti'

function visit(id: string, state: LocalVisit['state'], updatedAt: string): LocalVisit {
  return {
    id, roundId: 3, villageId: 7, questionnaireVersionId: 2, farmCode: FARM, location: null, answers: { head_name: NAME, farm_size_ha: 2.5 },
    consent: true, consentAt: null, startedAt: updatedAt, savedAt: null, baseVersion: 0, state, reviewState: null, reviewReason: null,
    errors: null, serverCopy: null, updatedAt, syncedAt: null
  }
}

/** Every value IndexedDB holds in a store, read without Dexie, as text (bytes as Latin-1, so any clear text shows). */
function rawText(name: string, store: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const open = indexedDB.open(name)
    open.onerror = () => reject(open.error)
    open.onsuccess = () => {
      const request = open.result.transaction(store).objectStore(store).getAll()
      request.onsuccess = () => {
        open.result.close()
        resolve(JSON.stringify(request.result, (_k, v: unknown) => v instanceof Uint8Array ? String.fromCharCode(...v) : v))
      }
    }
  })
}

beforeEach(async () => {
  key = await newDataKey()
  db = new FieldDatabase(`sealing-${Math.random()}`, () => key)
})
afterEach(() => db.close())

describe('sealed field store', () => {
  it('stores only index fields in clear and reads records back whole, through every query the app uses', async () => {
    await db.visits.bulkPut([visit('a', 'queued', '2026-03-01T10:00:00Z'), visit('b', 'synced', '2026-03-02T10:00:00Z'), visit('c', 'draft', '2026-03-03T10:00:00Z')])
    const raw = await rawText(db.name, 'visits')
    expect(raw).not.toContain(FARM)
    expect(raw).not.toContain(NAME)
    expect(raw).not.toContain('farm_size_ha')
    expect(raw).toContain('"state":"queued"')

    expect((await db.visits.get('a'))!.answers).toEqual({ head_name: NAME, farm_size_ha: 2.5 })
    expect((await db.visits.where('state').equals('queued').toArray()).map(v => v.farmCode)).toEqual([FARM])
    expect((await db.visits.where('state').anyOf(['queued', 'draft']).toArray()).map(v => v.id).sort()).toEqual(['a', 'c'])
    expect((await db.visits.orderBy('updatedAt').reverse().toArray()).map(v => v.id)).toEqual(['c', 'b', 'a'])
    expect((await db.visits.bulkGet(['b', 'x'])).map(v => v?.farmCode ?? null)).toEqual([FARM, null])
    expect((await db.visits.filter(v => v.answers.head_name === NAME).toArray()).length).toBe(3)
    expect(await db.visits.where('state').equals('synced').count()).toBe(1)
  })

  it('keeps a read-then-write transaction alive across the encryption', async () => {
    await db.visits.put(visit('a', 'queued', '2026-03-01T10:00:00Z'))
    await db.transaction('rw', db.visits, db.photos, async () => {
      const current = await db.visits.get('a')
      await db.visits.update('a', { state: 'synced', reviewReason: `${current!.farmCode} checked` })
      await db.visits.put({ ...(await db.visits.get('a'))!, farmCode: 'KAW-0418' })
    })
    const after = await db.visits.get('a')
    expect([after!.state, after!.reviewReason, after!.farmCode]).toEqual(['synced', `${FARM} checked`, 'KAW-0418'])
    expect(await rawText(db.name, 'visits')).not.toContain('checked')
  })

  it('seals photo bytes and gives the Blob back', async () => {
    const bytes = new Uint8Array([0xFF, 0xD8, 0xFF, ...new TextEncoder().encode('PHOTO-BYTES-MARKER')])
    const photo: LocalPhoto = { id: 'p1', visitId: 'a', blob: new Blob([bytes], { type: 'image/jpeg' }), contentType: 'image/jpeg', size: bytes.length, sha256: 'x', state: 'waiting', createdAt: '2026-03-01T10:00:00Z' }
    await db.photos.add(photo)
    expect(await rawText(db.name, 'photos')).not.toContain('PHOTO-BYTES-MARKER')
    const back = (await db.photos.where('visitId').equals('a').toArray())[0]!
    expect(back.blob.type).toBe('image/jpeg')
    expect(new Uint8Array(await back.blob.arrayBuffer())).toEqual(bytes)
    await db.photos.where({ id: 'p1', state: 'waiting' }).delete()
    expect(await db.photos.count()).toBe(0)
  })

  it('refuses to read or write while locked, and still counts and deletes by index', async () => {
    await db.visits.put(visit('a', 'queued', '2026-03-01T10:00:00Z'))
    key = null
    await expect(db.visits.get('a')).rejects.toBeInstanceOf(FieldLockedError)
    await expect(db.visits.put(visit('b', 'queued', '2026-03-01T10:00:00Z'))).rejects.toBeInstanceOf(FieldLockedError)
    expect(await db.visits.where('state').equals('queued').count()).toBe(1)
  })

  it('a record sealed under another key does not open', async () => {
    await db.visits.put(visit('a', 'queued', '2026-03-01T10:00:00Z'))
    key = await newDataKey()
    await expect(db.visits.get('a')).rejects.toThrow()
  })
})

describe('keys and records', () => {
  it('a wrong PIN does not unwrap the data key; the right one does', async () => {
    const salt = randomBytes(16)
    const data = await newDataKey()
    const wrapped = await wrapDataKey(data, await pinKey('482913', salt, 1000))
    await expect(unwrapDataKey(wrapped, await pinKey('482914', salt, 1000))).rejects.toThrow()
    const back = await unwrapDataKey(wrapped, await pinKey('482913', salt, 1000))
    expect(back.algorithm).toMatchObject({ name: 'AES-GCM', length: 256 })
  })

  it('encodes JSON values and nested Blobs losslessly', async () => {
    const value = { a: 'é ✓', n: [1, 2.5, null], b: new Blob([new Uint8Array([1, 2, 3])], { type: 'image/png' }), deep: { c: new Blob(['xy']) } }
    const back = decodeRecord(await encodeRecord(value)) as typeof value
    expect([back.a, back.n]).toEqual([value.a, value.n])
    expect(new Uint8Array(await back.b.arrayBuffer())).toEqual(new Uint8Array([1, 2, 3]))
    expect(await back.deep.c.text()).toBe('xy')
  })

  it('wrong PINs are slowed down step by step', () => {
    expect([1, 2, 3, 4, 5, 12, 30].map(delayAfter)).toEqual([0, 5_000, 10_000, 20_000, 40_000, 900_000, 900_000])
  })
})
