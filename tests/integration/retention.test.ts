import { createHash, randomUUID } from 'node:crypto'
import { QueryTypes } from 'sequelize'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { PrivacyView, RetentionReport } from '../../shared/types/privacy'
import { AuditEntry, Photo, Round, Visit } from '../../server/db/models'
import { rectangular } from '../support/csv'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { objectSize } from '../support/object-store'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'
import { baseUrl } from '../support/server'

// Retention after a round closes: the settings page's plan (what is purged next and when), the purge of photos
// (rows and files), positions and names (farm codes → their export pseudonyms, free text dropped), and its report.

let org: TestOrganisation
let round: TestRound
let visits: Array<ReturnType<typeof makeVisit>>
let photoKey: string
const DAY = 24 * 3600 * 1000
const jpeg = Buffer.concat([Buffer.from([0xFF, 0xD8, 0xFF, 0xE0]), Buffer.alloc(8_000, 3)])

const view = async () => (await org.admin.get<PrivacyView>('/api/settings/privacy')).body
const purge = () => org.admin.post<{ report: RetentionReport | null, view: PrivacyView }>('/api/settings/privacy/purge')
const closedDaysAgo = (days: number) => Round.update({ closedAt: new Date(Date.now() - days * DAY) }, { where: { id: round.roundId } })
async function pseudonyms(): Promise<Map<string, string>> {
  const answer = await org.coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)
  const [header, ...rows] = rectangular(String(answer.body))
  return new Map(rows.map(r => [r[header!.indexOf('visit_id')]!, r[header!.indexOf('farm_pseudonym')]!]))
}

beforeAll(async () => {
  testDatabase()
  org = await makeOrganisation('Heron Creek Smallholders')
  round = await makeRound(org.coordinator, org.enumeratorId, [{ key: 'notes', label: 'Notes', type: 'text', maxLength: 200 }])
  visits = [
    makeVisit(round, {}, { notes: 'Plot owned by Ayodele Marchetti' }),
    makeVisit(round, { location: { kind: 'manual', reason: 'Under the mango trees near the chief\'s house', lat: -13.2, lon: 31.4 } }),
    makeVisit(round)
  ]
  expect((await org.enumerator.post('/api/sync/visits', { visits })).status).toBe(200)
  const photo = await fetch(`${baseUrl()}/api/photos/${randomUUID()}?visitId=${visits[0]!.id}&sha256=${createHash('sha256').update(jpeg).digest('hex')}`, {
    method: 'PUT', headers: { 'content-type': 'image/jpeg', 'cookie': org.enumerator.cookieHeader(), 'x-forwarded-for': '10.9.3.1' }, body: jpeg
  })
  expect(photo.status).toBe(200)
  photoKey = (await Photo.findOne({ where: { visitId: visits[0]!.id } }))!.objectKey
  for (const v of visits) expect((await org.coordinator.post(`/api/review/visits/${v.id}`, { action: 'accept' })).status).toBe(200)
  expect((await org.coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'closed' })).status).toBe(200)
})
afterAll(closeTestDatabase)

describe('retention periods', () => {
  it('keeps everything while no period is set', async () => {
    const v = await view()
    expect(v.settings.retentionDays).toEqual({ photos: null, gps: null, names: null })
    expect(v.upcoming).toEqual([])
    expect(v.lastPurge).toBeNull()
  })

  it('refuses a period that is not a whole number of days, and changes nothing', async () => {
    const bad = await org.admin.request('PUT', '/api/settings/privacy', { keepAnswersAfterErasure: false, retentionDays: { photos: -1, gps: 1.5, names: null } })
    expect(bad.status).toBe(400)
    expect((await view()).settings.retentionDays.photos).toBeNull()
    expect((await org.coordinator.request('PUT', '/api/settings/privacy', { keepAnswersAfterErasure: false, retentionDays: { photos: 1, gps: 1, names: 1 } })).status).toBe(403)
  })

  it('shows what will be purged next and when, counted from the close', async () => {
    const saved = await org.admin.request<PrivacyView>('PUT', '/api/settings/privacy', { keepAnswersAfterErasure: false, retentionDays: { photos: 30, gps: 90, names: 365 } })
    expect(saved.status).toBe(200)
    const closedAt = (await Round.findByPk(round.roundId))!.closedAt!
    const items = saved.body.upcoming.filter(i => i.roundId === round.roundId)
    expect(items.map(i => [i.kind, i.count])).toEqual([['photos', 1], ['gps', 3], ['names', 3]])
    expect(items.map(i => Date.parse(i.dueAt) - closedAt.getTime())).toEqual([30 * DAY, 90 * DAY, 365 * DAY])
    expect((await AuditEntry.findOne({ where: { organisationId: org.id, action: 'privacy.settings' } }))).not.toBeNull()
    // Nothing is due yet: a purge now removes nothing.
    expect((await purge()).body.report).toBeNull()
    expect(await Photo.count({ where: { visitId: visits[0]!.id } })).toBe(1)
  })

  it('purges photos (rows and files) and positions once due, keeps names, and reports it', async () => {
    await closedDaysAgo(100)
    const answer = await purge()
    expect(answer.status).toBe(200)
    // The scheduled check may have run first; either way the state and one report are what count.
    const rows = await Visit.findAll({ where: { roundId: round.roundId } })
    expect(await Photo.count({ where: { visitId: visits.map(v => v.id) } })).toBe(0)
    expect(await objectSize(photoKey)).toBeNull()
    for (const row of rows) expect([row.lat, row.lon, row.accuracyM, row.manualLocationReason]).toEqual([null, null, null, null])
    expect(rows.map(r => r.farmCode).sort()).toEqual(visits.map(v => v.farmCode).sort())
    const report = answer.body.report ?? (await view()).lastPurge
    expect(report).toMatchObject({ counts: { photos: 1, gps: 3, names: 0 }, rounds: 1 })
    const v = answer.body.view
    expect(v.lastPurge).toMatchObject({ counts: { photos: 1, gps: 3, names: 0 } })
    expect(v.upcoming.map(i => i.kind)).toEqual(['names'])
  })

  it('replaces farm codes by their export pseudonyms and drops free text when names are due', async () => {
    const before = await pseudonyms()
    await closedDaysAgo(400)
    // Farms registered by a sync whose batch was then not stored: the one a day old goes with the names, a newer one
    // (a sync may be between registering and storing) stays.
    const orphan = (code: string, daysAgo: number) => testDatabase().query(`INSERT INTO farms (organisation_id, code, village_id, created_at, updated_at)
      VALUES (?, ?, ?, ?, NOW(3))`, { replacements: [org.id, code, round.assignedVillageId, new Date(Date.now() - daysAgo * DAY)] })
    await orphan('ORPHAN-OLD', 2)
    await orphan('ORPHAN-NEW', 0)
    expect((await purge()).status).toBe(200)
    const left = await testDatabase().query<{ code: string }>('SELECT code FROM farms WHERE organisation_id = ? AND code LIKE \'ORPHAN-%\'',
      { replacements: [org.id], type: QueryTypes.SELECT })
    expect(left.map(f => f.code)).toEqual(['ORPHAN-NEW'])
    const rows = await Visit.findAll({ where: { roundId: round.roundId } })
    for (const row of rows) {
      expect(row.farmCode).toBe(before.get(row.id))
      expect(row.namesPurgedAt).not.toBeNull()
      expect(row.answers).not.toHaveProperty('notes')
    }
    // Analysts' earlier files still match: the export after the purge gives the same pseudonyms.
    expect(await pseudonyms()).toEqual(before)
    const v = await view()
    expect(v.upcoming).toEqual([])
    expect(v.lastPurge).toMatchObject({ counts: { names: 3 } })
    // Nothing left: another purge reports nothing and records nothing.
    const entries = await AuditEntry.count({ where: { organisationId: org.id, action: 'retention.purge' } })
    expect((await purge()).body.report).toBeNull()
    expect(await AuditEntry.count({ where: { organisationId: org.id, action: 'retention.purge' } })).toBe(entries)
  })

  it('schedules nothing for a reopened round', async () => {
    expect((await org.coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'open' })).status).toBe(200)
    expect((await Round.findByPk(round.roundId))!.closedAt).toBeNull()
  })
})
