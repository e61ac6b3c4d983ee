import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { PrivacyView, RetentionReport } from '../../shared/types/privacy'
import { Round, SampleFarm, Visit } from '../../server/db/models'
import { rectangular } from '../support/csv'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'

// The sample lists under the retention machinery: when a closed round's names are due, the heads' names, hints,
// positions and notes go, and each listed farm's code becomes the export pseudonym its visits get, so the weights
// still find the visits.

let org: TestOrganisation
let round: TestRound
const DAY = 24 * 3600 * 1000

beforeAll(async () => {
  testDatabase()
  org = await makeOrganisation('Plover Flats Growers')
  round = await makeRound(org.coordinator, org.enumeratorId)
  const put = await org.coordinator.request('PUT', `/api/rounds/${round.roundId}/sample/${round.assignedVillageId}`, {
    listedFarms: 30, selectionProbability: 0.4,
    farms: [
      { farmCode: 'PL-001', rank: 0, headName: 'Temba Ruvari', hint: 'White gate', lat: -13.1, lon: 31.5 },
      { farmCode: 'PL-002', rank: 0, headName: 'Sefa Moloki', hint: 'By the dam' },
      { farmCode: 'PL-101', rank: 1, headName: 'Kito Banre' }
    ]
  })
  expect(put.status, JSON.stringify(put.body)).toBe(200)
  const visit = makeVisit(round, { farmCode: 'PL-001' })
  expect((await org.enumerator.post('/api/sync/visits', { visits: [visit] })).status).toBe(200)
  expect((await org.coordinator.post(`/api/review/visits/${visit.id}`, { action: 'accept' })).status).toBe(200)
  expect((await org.coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'closed' })).status).toBe(200)
})
afterAll(closeTestDatabase)

describe('retention of the sample lists', () => {
  it('counts the listed farms among the names still held, and purges them when due', async () => {
    const saved = await org.admin.request<PrivacyView>('PUT', '/api/settings/privacy', { keepAnswersAfterErasure: false, retentionDays: { photos: null, gps: null, names: 30 } })
    expect(saved.status).toBe(200)
    const names = (await org.admin.get<PrivacyView>('/api/settings/privacy')).body.upcoming.find(i => i.kind === 'names')
    // One visit and three listed farms.
    expect(names?.count).toBe(4)
    const exported = await org.coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)
    const [header, row] = rectangular(String(exported.body))
    const pseudonym = row![header!.indexOf('farm_pseudonym')]!
    await Round.update({ closedAt: new Date(Date.now() - 40 * DAY) }, { where: { id: round.roundId } })
    const purged = await org.admin.post<{ report: RetentionReport | null }>('/api/settings/privacy/purge')
    expect(purged.status).toBe(200)
    expect(purged.body.report).toMatchObject({ counts: { names: 4 } })
    const farms = await SampleFarm.findAll({ where: { roundId: round.roundId }, order: [['sampleRank', 'ASC'], ['id', 'ASC']] })
    expect(farms.map(f => [f.headName, f.hint, f.lat, f.lon, f.namesPurgedAt !== null])).toEqual([
      [null, null, null, null, true], [null, null, null, null, true], [null, null, null, null, true]
    ])
    expect(farms.some(f => f.farmCode.startsWith('PL-'))).toBe(false)
    // The listed farm and its visit carry the same pseudonym: the weight still reaches the visit.
    const visit = (await Visit.findOne({ where: { roundId: round.roundId } }))!
    expect(visit.farmCode).toBe(pseudonym)
    expect(farms[0]!.farmCode).toBe(pseudonym)
    const after = await org.coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)
    const [h2, r2] = rectangular(String(after.body))
    expect(Number(r2![h2!.indexOf('sampling_weight')])).toBeCloseTo(30 / (0.4 * 2), 12)
  })
})
