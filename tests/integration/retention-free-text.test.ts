import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, MailMessage, Round, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'

// The retention purge of names reaches every free text that can hold them: the reviewer's sent-back reason on
// the visit and in its audit entries, messages to enumerators that name the farm, and the enumerator's tablet
// (told to drop its copy, which still holds the farm code and answers).

let org: TestOrganisation
let round: TestRound
let visits: Array<ReturnType<typeof makeVisit>>
let otherMail: MailMessage
const DAY = 24 * 3600 * 1000
const REASON = 'Farmer Ayodele Marchetti gave the neighbour\'s plot size; ask again'

const mailNaming = (farmCode: string, organisationId: number) => MailMessage.create({
  organisationId, userId: null, kind: 'visit-sent-back', toAddress: `sent-back-${Math.random().toString(36).slice(2, 8)}@team-test.example`,
  subject: `Visit ${farmCode} in Test village was sent back`,
  textBody: `Someone sent back your visit to farm ${farmCode} in Test village.\nReason: ${REASON}`,
  htmlBody: `<p>${REASON}</p>`, sensitive: false, attempts: 1, lastError: null, nextAttemptAt: null, sentAt: new Date()
})

beforeAll(async () => {
  testDatabase()
  org = await makeOrganisation('Kestrel Ridge Growers')
  round = await makeRound(org.coordinator, org.enumeratorId, [{ key: 'notes', label: 'Notes', type: 'text', maxLength: 200 }])
  visits = [makeVisit(round, {}, { notes: 'Plot owned by Ayodele Marchetti' }), makeVisit(round)]
  expect((await org.enumerator.post('/api/sync/visits', { visits })).status).toBe(200)
  expect((await org.coordinator.post(`/api/review/visits/${visits[0]!.id}`, { action: 'send_back', reason: REASON })).status).toBe(200)
  expect((await org.coordinator.post(`/api/review/visits/${visits[1]!.id}`, { action: 'accept' })).status).toBe(200)
  await mailNaming(visits[0]!.farmCode, org.id)
  // A message about a farm of another round stays as it is.
  otherMail = await mailNaming('F-OTHER-ROUND', org.id)
  expect((await org.coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'closed' })).status).toBe(200)
})
afterAll(closeTestDatabase)

describe('retention purge of names', () => {
  it('holds the reason, the message and the tablet copy before the purge', async () => {
    const sentBack = (await Visit.findAll({ where: { roundId: round.roundId } })).find(v => v.farmCode === visits[0]!.farmCode)
    expect(sentBack!.reviewReason).toBe(REASON)
    expect(await MailMessage.count({ where: { organisationId: org.id, subject: `Visit ${visits[0]!.farmCode} in Test village was sent back` } })).toBe(1)
    const states = await org.enumerator.get<{ erased: string[] }>('/api/sync/visits')
    expect(states.body.erased).toEqual([])
  })

  it('blanks the sent-back reason, the audit entry quoting it and the message naming the farm, and tells the tablet to drop its copies', async () => {
    const since = new Date(Date.now() - 60_000).toISOString()
    await Round.update({ closedAt: new Date(Date.now() - 10 * DAY) }, { where: { id: round.roundId } })
    const saved = await org.admin.request('PUT', '/api/settings/privacy', { keepAnswersAfterErasure: false, retentionDays: { photos: null, gps: null, names: 5 } })
    expect(saved.status).toBe(200)
    expect((await org.admin.post('/api/settings/privacy/purge')).status).toBe(200)

    const rows = await Visit.findAll({ where: { roundId: round.roundId } })
    expect(rows).toHaveLength(2)
    for (const row of rows) {
      expect(row.reviewReason).toBeNull()
      expect(JSON.stringify(row.answers)).not.toContain('Marchetti')
    }
    const entries = await AuditEntry.findAll({ where: { organisationId: org.id, entityType: 'visit' } })
    expect(entries.length).toBeGreaterThan(0)
    for (const entry of entries) expect(JSON.stringify(entry.details ?? {})).not.toContain('Marchetti')

    const mails = await MailMessage.findAll({ where: { organisationId: org.id } })
    const text = mails.filter(m => m.id !== otherMail.id).map(m => `${m.subject} ${m.textBody} ${m.htmlBody ?? ''}`).join('\n')
    expect(text).not.toContain(visits[0]!.farmCode)
    expect(text).not.toContain('Marchetti')
    expect(text).toContain('removed: retention period ended')
    const untouched = await MailMessage.findByPk(otherMail.id)
    expect(untouched!.subject).toContain('F-OTHER-ROUND')

    // The tablet's next pull (since its last one, and a full one) names both visits to drop.
    const pulled = await org.enumerator.get<{ erased: string[], visits: Array<{ id: string }> }>(`/api/sync/visits?since=${encodeURIComponent(since)}`)
    expect(pulled.status).toBe(200)
    expect([...pulled.body.erased].sort()).toEqual(visits.map(v => v.id).sort())
    expect(pulled.body.visits.map(v => v.id)).toEqual([])
    const full = await org.enumerator.get<{ erased: string[] }>('/api/sync/visits')
    expect([...full.body.erased].sort()).toEqual(visits.map(v => v.id).sort())
  })
})
