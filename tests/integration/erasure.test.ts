import { createHash, randomUUID } from 'node:crypto'
import { QueryTypes } from 'sequelize'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { FarmFootprint, ErasureResult } from '../../shared/types/privacy'
import { Organisation, Photo, Round, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { fitAndWait } from '../support/models'
import { objectSize } from '../support/object-store'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'
import { baseUrl } from '../support/server'

// Erasure on request, checked where the data lives: every table of the database, the object store, the answer a
// tablet gets at its next sync, and the exports. An invented organisation of its own, so its setting can change.

let org: TestOrganisation
let round: TestRound
const FARM = `KH-${randomUUID().slice(0, 8)}`
const NAME = 'Nakato Ssewanyana-Varga'
const visitA1 = () => makeVisit(round, { farmCode: FARM, location: { kind: 'gps', lat: -13.0987654, lon: 31.5012345, accuracyM: 5 } },
  { farm_size_ha: 3.5, notes: `${NAME} lives by the borehole` })
let a1: ReturnType<typeof visitA1>
let a2: ReturnType<typeof visitA1>
let photoKey: string
let runId: number
let statesSince: string

const sha = (b: Buffer) => createHash('sha256').update(b).digest('hex')
const jpeg = Buffer.concat([Buffer.from([0xFF, 0xD8, 0xFF, 0xE0]), Buffer.alloc(20_000, 9)])

function putPhoto(photoId: string, visitId: string) {
  return fetch(`${baseUrl()}/api/photos/${photoId}?visitId=${visitId}&sha256=${sha(jpeg)}`, {
    method: 'PUT',
    headers: { 'content-type': 'image/jpeg', 'cookie': org.enumerator.cookieHeader(), 'x-forwarded-for': '10.9.1.1' },
    body: jpeg
  })
}

/** The tables where a value still appears, in any column of any row: the erased values must appear nowhere. */
async function tablesHolding(...needles: string[]): Promise<string[]> {
  const db = testDatabase()
  const tables = await db.query<{ name: string }>('SELECT table_name AS name FROM information_schema.tables WHERE table_schema = DATABASE()', { type: QueryTypes.SELECT })
  const found: string[] = []
  for (const { name } of tables) {
    const text = JSON.stringify(await db.query(`SELECT * FROM \`${name}\``, { type: QueryTypes.SELECT }))
    for (const needle of needles) if (text.includes(needle)) found.push(`${name}: ${needle}`)
  }
  return found
}

beforeAll(async () => {
  testDatabase()
  org = await makeOrganisation('Kestrel Hollow Growers Union')
  round = await makeRound(org.coordinator, org.enumeratorId, [{ key: 'notes', label: 'Notes', type: 'text', maxLength: 200 }])
  a1 = visitA1()
  a2 = { ...visitA1(), answers: { adopted: false, farm_size_ha: 3.4, household_size: 5, notes: `Second call on ${NAME}` } }
  // Twenty other farms, so that a model can be fitted on the accepted visits.
  const others = Array.from({ length: 20 }, (_, i) => makeVisit(round, {}, { adopted: i % 3 === 0, farm_size_ha: 1 + (i % 7), household_size: 3 + (i % 5) }))
  const sync = await org.enumerator.post<SyncBody>('/api/sync/visits', { visits: [a1, a2, ...others] })
  expect(sync.status).toBe(200)
  expect(sync.body.counts.stored).toBe(22)
  const photo = await putPhoto(randomUUID(), a1.id)
  expect(photo.status).toBe(200)
  photoKey = (await Photo.findOne({ where: { visitId: a1.id } }))!.objectKey
  // A1 accepted (it feeds the model); A2 sent back with a reason naming the farmer (it goes into mail and the audit).
  expect((await org.coordinator.post(`/api/review/visits/${a1.id}`, { action: 'accept' })).status).toBe(200)
  expect((await org.coordinator.post(`/api/review/visits/${a2.id}`, { action: 'send_back', reason: `Ask ${NAME} again about the plot` })).status).toBe(200)
  const bulk = await org.coordinator.post('/api/review/accept-unflagged', { roundId: round.roundId, count: 20 })
  expect(bulk.status).toBe(200)
  const run = await fitAndWait(org.coordinator, { roundId: round.roundId, covariates: [{ key: 'farm_size_ha' }, { key: 'household_size' }] })
  expect(run.status).toBe('done')
  expect(run.dataChanged).toBe(false)
  runId = run.id
  statesSince = new Date(Date.now() - 1000).toISOString()
})
afterAll(closeTestDatabase)

describe('erasing one farm at the farmer\'s request (non-identifying answers kept)', () => {
  let result: ErasureResult

  it('shows where the farm\'s data lives before anything is erased', async () => {
    await Organisation.update({ settings: { ...(await Organisation.findByPk(org.id))!.settings, privacy: { keepAnswersAfterErasure: true, retentionDays: { photos: null, gps: null, names: null } } } }, { where: { id: org.id } })
    const answer = await org.coordinator.get<FarmFootprint>(`/api/privacy/farm?code=${encodeURIComponent(FARM.toLowerCase())}`)
    expect(answer.status).toBe(200)
    expect(answer.body).toMatchObject({ visits: 2, photos: 1, tablets: 1, erasedBefore: null })
    expect(answer.body.rounds).toEqual([expect.objectContaining({ roundId: round.roundId, visits: 2, accepted: 1 })])
    expect(answer.body.sources.length).toBeGreaterThanOrEqual(4)
  })

  it('refuses without a reason and changes nothing', async () => {
    const answer = await org.coordinator.post('/api/privacy/erasures', { farmCode: FARM, reason: '' })
    expect(answer.status).toBe(400)
    expect(await Visit.count({ where: { farmCode: FARM } })).toBe(2)
  })

  it('erases from the database: code replaced, position, free text and photo rows gone, numbers kept; values nowhere', async () => {
    expect(await objectSize(photoKey)).toBe(jpeg.length)
    const answer = await org.coordinator.post<ErasureResult>('/api/privacy/erasures', { farmCode: FARM, reason: 'The farmer withdrew consent at the village meeting' })
    expect(answer.status).toBe(200)
    result = answer.body
    expect(result).toMatchObject({ visits: 2, photos: 1, rounds: 1, keptAnswers: true, modelRoundsChanged: 1 })
    expect(result.opaqueId).toMatch(/^E-[0-9a-f]{12}$/)

    const rows = await Visit.findAll({ where: { id: [a1.id, a2.id] }, order: [['savedAt', 'ASC']] })
    expect(rows).toHaveLength(2)
    for (const row of rows) {
      expect(row.farmCode).toBe(result.opaqueId)
      expect([row.lat, row.lon, row.accuracyM, row.manualLocationReason]).toEqual([null, null, null, null])
      expect(row.answers).not.toHaveProperty('notes')
      expect(row.namesPurgedAt).not.toBeNull()
    }
    expect(rows.find(r => r.id === a1.id)!.answers).toMatchObject({ adopted: true, farm_size_ha: 3.5, household_size: 6 })
    expect(await Photo.count({ where: { visitId: [a1.id, a2.id] } })).toBe(0)

    expect(await tablesHolding(FARM, NAME, '-13.0987654')).toEqual([])
    // The audit keeps the reason and the counts, not the erased values.
    const [entry] = await testDatabase().query<{ details: string }>('SELECT details FROM audit_entries WHERE action = \'farm.erase\' AND organisation_id = ? ORDER BY id DESC LIMIT 1', { replacements: [org.id], type: QueryTypes.SELECT })
    const details = typeof entry!.details === 'string' ? JSON.parse(entry!.details) : entry!.details
    expect(details).toMatchObject({ reason: 'The farmer withdrew consent at the village meeting', visits: 2, photos: 1, opaqueId: result.opaqueId })
  })

  it('deletes the photo from the object store', async () => {
    expect(await objectSize(photoKey)).toBeNull()
  })

  it('marks the model fit as built on data that has since changed', async () => {
    const run = await org.coordinator.get<{ dataChanged: boolean }>(`/api/models/${runId}`)
    expect(run.body.dataChanged).toBe(true)
  })

  it('tells the tablet at its next sync to drop its copies, and stores nothing of the farm again', async () => {
    const states = await org.enumerator.get<{ visits: Array<{ id: string }>, erased: string[] }>(`/api/sync/visits?since=${encodeURIComponent(statesSince)}`)
    expect(states.status).toBe(200)
    expect(states.body.erased.sort()).toEqual([a1.id, a2.id].sort())
    expect(states.body.visits.map(v => v.id)).not.toContain(a1.id)
    expect(JSON.stringify(states.body)).not.toContain(FARM)

    // A tablet that had not synced yet sends the sent-back visit again, and a new visit of the same farm (any case).
    const again = { ...a2, baseVersion: 2, answers: { ...a2.answers, notes: `${NAME} again` } }
    const fresh = makeVisit(round, { farmCode: FARM.toLowerCase() }, { notes: NAME })
    const sync = await org.enumerator.post<SyncBody>('/api/sync/visits', { visits: [again, fresh] })
    expect(sync.status).toBe(200)
    expect(sync.body.results.map(r => r.status)).toEqual(['erased', 'erased'])
    expect(await Visit.findByPk(fresh.id)).toBeNull()
    expect((await Visit.findByPk(a2.id))!.farmCode).toBe(result.opaqueId)
    // A photo the tablet still had waiting is refused.
    expect((await putPhoto(randomUUID(), a1.id)).status).toBe(410)
    expect(await tablesHolding(FARM, NAME)).toEqual([])
  })

  it('leaves the farm code and free text out of every later export', async () => {
    const csv = await org.coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)
    expect(csv.status).toBe(200)
    expect(csv.body).not.toContain(FARM)
    expect(csv.body).not.toContain(NAME)
    expect(csv.body).toContain(result.opaqueId)
    const zip = await fetch(`${baseUrl()}/api/rounds/${round.roundId}/export?part=all`, { headers: { 'cookie': org.coordinator.cookieHeader(), 'x-forwarded-for': '10.9.1.2' } })
    const bytes = Buffer.from(await zip.arrayBuffer())
    const { unzipSync, strFromU8 } = await import('fflate')
    const files = unzipSync(bytes)
    for (const [, content] of Object.entries(files)) expect(strFromU8(content)).not.toContain(FARM)
  })
})

describe('erasing when the organisation keeps nothing of an erased farm', () => {
  it('deletes the visits entirely and still tells the tablet', async () => {
    await Organisation.update({ settings: { ...(await Organisation.findByPk(org.id))!.settings, privacy: { keepAnswersAfterErasure: false, retentionDays: { photos: null, gps: null, names: null } } } }, { where: { id: org.id } })
    const farm = `KH-${randomUUID().slice(0, 8)}`
    const visit = makeVisit(round, { farmCode: farm }, { notes: 'Plot beside the dam' })
    expect((await org.enumerator.post('/api/sync/visits', { visits: [visit] })).status).toBe(200)
    expect((await org.coordinator.post(`/api/review/visits/${visit.id}`, { action: 'accept' })).status).toBe(200)
    const version = (await Round.findByPk(round.roundId))!.dataVersion
    const since = new Date(Date.now() - 1000).toISOString()
    const answer = await org.coordinator.post<ErasureResult>('/api/privacy/erasures', { farmCode: farm, reason: 'Consent withdrawn by telephone' })
    expect(answer.status).toBe(200)
    expect(answer.body).toMatchObject({ visits: 1, keptAnswers: false, modelRoundsChanged: 1 })
    expect(await Visit.findByPk(visit.id)).toBeNull()
    expect((await Round.findByPk(round.roundId))!.dataVersion).toBe(version + 1)
    const states = await org.enumerator.get<{ erased: string[] }>(`/api/sync/visits?since=${encodeURIComponent(since)}`)
    // Erasures of the tests before may fall in the same second: this visit is among those the tablet is told of.
    expect(states.body.erased).toContain(visit.id)
    expect(await tablesHolding(farm)).toEqual([])
    // Nothing left to erase: a clear 404.
    expect((await org.coordinator.post('/api/privacy/erasures', { farmCode: farm, reason: 'Asked twice' })).status).toBe(404)
  })

  it('finds nothing of another organisation\'s farms', async () => {
    const answer = await org.coordinator.get<FarmFootprint>('/api/privacy/farm?code=F-00000001')
    expect(answer.body.visits).toBe(0)
  })
})
