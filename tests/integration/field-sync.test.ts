import { request } from 'node:http'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, User, Visit } from '../../server/db/models'
import { acceptedVisitsForRound } from '../../server/utils/accepted-visits'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { type Client, baseUrl, demoUser, freshClient } from '../support/server'

let coordinator: Client
let enumerator: Client
let round: TestRound

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  enumerator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  await enumerator.signIn(demoUser('enumerator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id)
})
afterAll(closeTestDatabase)

const sync = (visits: unknown[], client = enumerator) => client.post<SyncBody>('/api/sync/visits', { visits })
const countOf = (ids: string[]) => Visit.count({ where: { id: ids } })

/** Sends a request and drops the connection as the answer begins to arrive: the device never reads it. */
function sendAndDrop(path: string, body: unknown, cookie: string, ip: string): Promise<void> {
  return new Promise((resolve) => {
    const payload = JSON.stringify(body)
    const req = request(`${baseUrl()}${path}`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'content-length': Buffer.byteLength(payload), cookie, 'x-forwarded-for': ip }
    })
    req.on('error', () => resolve())
    req.on('close', () => resolve())
    // Cut as the answer starts to arrive: the server has committed, the device never reads what was stored.
    req.on('response', () => req.destroy())
    req.end(payload)
  })
}

describe('sync: stored, already stored, nothing twice', () => {
  it('stores a batch and answers per record; the same batch again changes nothing', async () => {
    const visits = Array.from({ length: 20 }, () => makeVisit(round))
    const first = await sync(visits)
    expect(first.status).toBe(200)
    expect(first.body.counts).toEqual({ stored: 20, duplicate: 0, rejected: 0, conflict: 0, erased: 0 })
    expect(first.body.results.map(r => r.id)).toEqual(visits.map(v => v.id))
    const before = await Visit.findAll({ where: { id: visits.map(v => v.id) }, order: [['id', 'ASC']], raw: true })
    const again = await sync(visits)
    expect(again.status).toBe(200)
    expect(again.body.counts).toEqual({ stored: 0, duplicate: 20, rejected: 0, conflict: 0, erased: 0 })
    const after = await Visit.findAll({ where: { id: visits.map(v => v.id) }, order: [['id', 'ASC']], raw: true })
    expect(after).toEqual(before)
  })

  it('keeps no duplicate when the connection drops after the server committed and the device retries', async () => {
    const visits = Array.from({ length: 30 }, () => makeVisit(round))
    await sendAndDrop('/api/sync/visits', { visits }, enumerator.cookieHeader(), '10.9.9.9')
    expect(await countOf(visits.map(v => v.id))).toBe(30)
    const retry = await sync(visits)
    expect(retry.body.counts.duplicate).toBe(30)
    expect(await countOf(visits.map(v => v.id))).toBe(30)
  })

  it('stores the valid records of a mixed batch and returns the invalid ones with reasons, touching nothing else', async () => {
    const untouched = makeVisit(round)
    await sync([untouched])
    const before = await Visit.findByPk(untouched.id, { raw: true })
    const good = [makeVisit(round), makeVisit(round)]
    const bad = [
      makeVisit(round, {}, { farm_size_ha: 'two' }),
      makeVisit(round, {}, { colour_of_door: 'blue' }),
      makeVisit(round, {}, { household_size: 99 }),
      makeVisit(round, { consent: false }),
      makeVisit(round, { villageId: round.otherVillageId })
    ]
    const answer = await sync([good[0], ...bad, good[1]])
    expect(answer.status).toBe(200)
    expect(answer.body.counts).toMatchObject({ stored: 2, rejected: 5 })
    expect(answer.body.results.map(r => r.status)).toEqual(['stored', 'rejected', 'rejected', 'rejected', 'rejected', 'rejected', 'stored'])
    expect(answer.body.results[1]!.errors).toEqual({ 'answers.farm_size_ha': 'Enter a number' })
    expect(answer.body.results[2]!.errors).toEqual({ answers: 'Not a question of this questionnaire: colour_of_door' })
    expect(answer.body.results[3]!.errors).toEqual({ 'answers.household_size': 'At most 30' })
    expect(answer.body.results[4]!.errors).toHaveProperty('consent')
    expect(answer.body.results[5]!.errors).toEqual({ villageId: 'You are not assigned to this village in this round' })
    expect(await countOf(good.map(v => v.id))).toBe(2)
    expect(await countOf(bad.map(v => v.id))).toBe(0)
    expect(await Visit.findByPk(untouched.id, { raw: true })).toEqual(before)
  })
})

describe('sync: bad input gets a clear 4xx and stores nothing', () => {
  it.each([
    ['wrong types', () => makeVisit(round, {}, { household_size: '6' }), 'answers.household_size'],
    ['an unknown question', () => makeVisit(round, {}, { favourite_song: 'x' }), 'answers'],
    ['a value out of range', () => makeVisit(round, {}, { farm_size_ha: 500 }), 'answers.farm_size_ha'],
    ['a village not assigned', () => makeVisit(round, { villageId: round.otherVillageId }), 'villageId'],
    ['a round not assigned', () => makeVisit(round, { roundId: 999_999 }), 'villageId'],
    ['no id', () => ({ ...makeVisit(round), id: 'not-a-uuid' }), 'id']
  ])('%s → 422 with the field named', async (_what, build, field) => {
    const visit = build()
    const answer = await sync([visit])
    expect(answer.status).toBe(422)
    expect(answer.body.message).toMatch(/No visit in this batch could be stored/)
    expect(Object.keys(answer.body.results[0]!.errors!)).toContain(field)
    expect(await Visit.count({ where: { farmCode: visit.farmCode } })).toBe(0)
  })

  it.each([
    ['no visits', { visits: [] }],
    ['not a list', { visits: 'all of them' }],
    ['too many', { visits: Array.from({ length: 501 }, () => ({})) }]
  ])('a malformed envelope (%s) → 400', async (_what, body) => {
    const answer = await enumerator.post<SyncBody>('/api/sync/visits', body)
    expect(answer.status).toBe(400)
    expect(answer.body.message).toMatch(/visits/)
  })

  it('refuses a round that is not open even for an assigned village', async () => {
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const closing = await makeRound(coordinator, me!.id)
    expect((await coordinator.request('PATCH', `/api/rounds/${closing.roundId}`, { status: 'closed' })).status).toBe(200)
    const answer = await sync([makeVisit(closing)])
    expect(answer.status).toBe(422)
    expect(answer.body.results[0]!.errors).toEqual({ roundId: 'This round is not open for visits' })
  })

  it('refuses an oversized body with 413 before reading it', async () => {
    const answer = await enumerator.request<SyncBody>('POST', '/api/sync/visits', undefined, JSON.stringify({ visits: [{ note: 'x'.repeat(4 * 1024 * 1024) }] }))
    expect(answer.status).toBe(413)
  })

  it('answers 403 to a coordinator posting visits', async () => {
    expect((await sync([makeVisit(round)], coordinator)).status).toBe(403)
  })
})

describe('sync: the server wins over a stale device edit', () => {
  it('answers conflict with the corrected server copy, and treats an identical resend as already stored', async () => {
    const visit = makeVisit(round, {}, { farm_size_ha: 3 })
    expect((await sync([visit])).body.results[0]!.version).toBe(1)
    const corrected = await coordinator.post(`/api/review/visits/${visit.id}`, { action: 'correct', answers: { farm_size_ha: 3.5 }, reason: 'Measured again with the farmer' })
    expect(corrected.status).toBe(200)
    const entry = await AuditEntry.findOne({ where: { action: 'visit.correct', entityId: visit.id } })
    expect(entry!.details).toMatchObject({ before: { farm_size_ha: 3 }, after: { farm_size_ha: 3.5 } })
    // A correction is checked with the visit's own questionnaire version, and recomputes the edge flag.
    const outOfRange = await coordinator.post<{ message: string }>(`/api/review/visits/${visit.id}`, { action: 'correct', answers: { farm_size_ha: 80 }, reason: 'Typo' })
    expect(outOfRange.status).toBe(400)
    expect(outOfRange.body.message).toBe('farm_size_ha: At most 50 ha')

    const staleEdit = { ...visit, baseVersion: 1, answers: { ...visit.answers, household_size: 7 } }
    const answer = await sync([staleEdit])
    expect(answer.body.results[0]!.status).toBe('conflict')
    expect(answer.body.results[0]!.server).toMatchObject({ version: 2, answers: { farm_size_ha: 3.5, household_size: 6 } })
    expect((await sync([visit])).body.results[0]!.status).toBe('duplicate')
    const stored = await Visit.findByPk(visit.id)
    expect(stored!.answers).toMatchObject({ farm_size_ha: 3.5, household_size: 6 })
  })

  it('lets a sent-back visit be fixed and resent from the version the device was told', async () => {
    const visit = makeVisit(round)
    await sync([visit])
    const back = await coordinator.post(`/api/review/visits/${visit.id}`, { action: 'send_back', reason: 'Household size looks wrong' })
    expect(back.status).toBe(200)
    const states = await enumerator.get<{ visits: Array<{ id: string, reviewState: string, reviewReason: string, version: number }> }>('/api/sync/visits')
    const state = states.body.visits.find(v => v.id === visit.id)!
    expect(state).toMatchObject({ reviewState: 'sent_back', reviewReason: 'Household size looks wrong', version: 2 })
    const fixed = { ...visit, baseVersion: state.version, answers: { ...visit.answers, household_size: 9 } }
    const answer = await sync([fixed])
    expect(answer.body.results[0]).toMatchObject({ status: 'stored', version: 3 })
    expect(await Visit.findByPk(visit.id, { raw: true })).toMatchObject({ reviewState: 'received', reviewReason: null })
    expect((await sync([fixed])).body.results[0]!.status).toBe('duplicate')
  })
})

describe('quality flags and review', () => {
  it('flags a duplicate farm code (both visits), a far GPS point, an edge value and a fast interview', async () => {
    const first = makeVisit(round, { farmCode: `DUP-${Date.now()}` })
    await sync([first])
    const started = new Date(Date.now() - 60_000)
    const second = makeVisit(round, {
      farmCode: first.farmCode,
      location: { kind: 'gps', lat: round.centre.lat + 0.2, lon: round.centre.lon, accuracyM: 5 },
      startedAt: started.toISOString(),
      savedAt: new Date(started.getTime() + 40_000).toISOString()
    }, { household_size: 30 })
    await sync([second])
    const [a, b] = await Promise.all([Visit.findByPk(first.id), Visit.findByPk(second.id)])
    expect(a!.flags).toEqual({ duplicateFarmCode: true })
    expect(b!.flags).toMatchObject({ duplicateFarmCode: true, edgeValues: ['household_size'], tooFastSeconds: 40 })
    expect(b!.flags.farFromVillageKm).toBeGreaterThan(20)
  })

  it('pages, sorts and filters the review table on the server', async () => {
    const base = `/api/review/visits?roundId=${round.roundId}`
    const all = await coordinator.get<{ total: number, items: Array<{ farmCode: string, reviewState: string, flags: object }> }>(`${base}&pageSize=100`)
    expect(all.status).toBe(200)
    expect(all.body.total).toBeGreaterThan(50)
    const paged = await coordinator.get<{ items: unknown[] }>(`${base}&pageSize=10&page=2`)
    expect(paged.body.items).toHaveLength(10)
    const sorted = await coordinator.get<{ items: Array<{ farmCode: string }> }>(`${base}&sort=farmCode&dir=asc&pageSize=100`)
    const codes = sorted.body.items.map(i => i.farmCode)
    expect(codes).toEqual([...codes].sort((x, y) => x.localeCompare(y, 'en', { sensitivity: 'base' })))
    const sentBack = await coordinator.get<{ items: Array<{ reviewState: string }> }>(`${base}&state=sent_back`)
    expect(sentBack.body.items.every(i => i.reviewState === 'sent_back')).toBe(true)
    const flagged = await coordinator.get<{ items: Array<{ flags: object }> }>(`${base}&flagged=1`)
    expect(flagged.body.items.length).toBeGreaterThan(0)
    expect(flagged.body.items.every(i => Object.keys(i.flags).length > 0)).toBe(true)
    expect((await coordinator.get(`${base}&state=maybe`)).status).toBe(400)
    expect((await coordinator.get(`${base}&sort=colour`)).status).toBe(400)
  })

  it('feeds only accepted visits to models', async () => {
    const visits = [makeVisit(round), makeVisit(round, {}, { adopted: false })]
    await sync(visits)
    expect(await acceptedVisitsForRound(round.roundId)).toEqual([])
    await coordinator.post(`/api/review/visits/${visits[1]!.id}`, { action: 'accept' })
    const rows = await acceptedVisitsForRound(round.roundId)
    expect(rows).toEqual([expect.objectContaining({ visitId: visits[1]!.id, villageId: round.assignedVillageId, adopted: 0, questionnaireVersion: round.versionId })])
    expect(rows[0]!.villageCode).toMatch(/^T/)
    // An accepted visit is locked against device edits.
    const edit = await sync([{ ...visits[1], baseVersion: 2, answers: { ...visits[1]!.answers, household_size: 8 } }])
    expect(edit.body.results[0]!.status).toBe('conflict')
  })
})

describe('rounds, questionnaires and villages', () => {
  it('edits a draft questionnaire in place and versions it once the round is open', async () => {
    const created = await coordinator.post<{ id: number }>('/api/rounds', { name: 'Versioning round', technology: 'storage bags', season: '2027' })
    const id = created.body.id
    const save = (questions: unknown[]) => coordinator.request<{ id: number, number: number }>('PUT', `/api/rounds/${id}/questionnaire`, { questions })
    const q = { key: 'bags', label: 'Bags used', type: 'whole', min: 0, max: 100 }
    const draft1 = await save([q])
    const draft2 = await save([{ ...q, label: 'Bags used last harvest' }])
    expect(draft2.body).toEqual(draft1.body)
    expect(draft2.body.number).toBe(1)
    expect((await coordinator.request('PATCH', `/api/rounds/${id}`, { status: 'open' })).status).toBe(200)
    const opened = await save([q, { key: 'store', label: 'Store type', type: 'choice', options: [{ value: 'crib', label: 'Crib' }, { value: 'room', label: 'Room' }] }])
    expect(opened.body.number).toBe(2)
    const detail = await coordinator.get<{ questionnaire: { number: number, definition: { questions: Array<{ key: string }> } } }>(`/api/rounds/${id}`)
    expect(detail.body.questionnaire.number).toBe(2)
    expect(detail.body.questionnaire.definition.questions.map(x => x.key)).toEqual(['adopted', 'bags', 'store'])
    // Opening an open round again changes nothing (rounds close and reopen; the same state twice is a no-op).
    expect((await coordinator.request('PATCH', `/api/rounds/${id}`, { status: 'open' })).status).toBe(200)
    expect((await coordinator.get<{ questionnaire: { number: number } }>(`/api/rounds/${id}`)).body.questionnaire.number).toBe(2)
    const bad = await save([{ key: 'Bad Key', label: 'x', type: 'yesno' }])
    expect(bad.status).toBe(400)
  })

  it.each([
    ['a point instead of a polygon', { type: 'Point', coordinates: [31.5, -13.1] }],
    ['an open ring', { type: 'Polygon', coordinates: [[[31.5, -13.1], [31.6, -13.1], [31.6, -13.2], [31.5, -13.2]]] }],
    ['longitude out of range', { type: 'Polygon', coordinates: [[[231.5, -13.1], [31.6, -13.1], [31.6, -13.2], [231.5, -13.1]]] }],
    ['two features', { type: 'FeatureCollection', features: [] }]
  ])('refuses a village boundary that is %s', async (_what, boundary) => {
    const answer = await coordinator.post('/api/villages', { code: `BAD-${Date.now()}`, name: 'Bad', district: 'Test district', centreLat: -13.1, centreLon: 31.5, boundary })
    expect(answer.status).toBe(400)
  })

  it('keeps a valid GeoJSON Feature boundary as its geometry', async () => {
    const ring = [[31.5, -13.1], [31.6, -13.1], [31.6, -13.2], [31.5, -13.1]]
    const answer = await coordinator.post<{ hasBoundary: boolean }>('/api/villages', {
      code: `GEO-${Date.now().toString(36)}`, name: 'Bounded', district: 'Test district', centreLat: -13.15, centreLon: 31.55,
      boundary: { type: 'Feature', properties: {}, geometry: { type: 'Polygon', coordinates: [ring] } }
    })
    expect(answer.status).toBe(200)
    expect(answer.body.hasBoundary).toBe(true)
  })
})
