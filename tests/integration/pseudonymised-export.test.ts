import { createHmac, randomUUID } from 'node:crypto'
import { strFromU8, unzipSync } from 'fflate'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry } from '../../server/db/models'
import { rectangular } from '../support/csv'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'
import { baseUrl } from '../support/server'

// Visit exports for analysts: farm codes replaced by stable keyed pseudonyms, positions rounded, free text left out;
// the identifying export only with a stated reason, and audited with it.

let org: TestOrganisation
let round: TestRound
let second: TestRound
const FARM = `PX-${randomUUID().slice(0, 8)}`
const visit = () => makeVisit(round, { farmCode: FARM, location: { kind: 'gps', lat: -13.0987654, lon: 31.5012345, accuracyM: 5 } }, { notes: '=HYPERLINK("http://x.example","Ngozi Albrechtsen")' })
let v1: ReturnType<typeof visit>

async function exportCsv(query: string, roundId = round.roundId) {
  const answer = await org.coordinator.get<string>(`/api/rounds/${roundId}/export?${query}`)
  return { status: answer.status, body: answer.body, rows: answer.status === 200 ? rectangular(String(answer.body)) : [] }
}

beforeAll(async () => {
  testDatabase()
  org = await makeOrganisation('Sunbird Terraces Cooperative')
  const notes = [{ key: 'notes', label: 'Notes', type: 'text', maxLength: 200 }]
  round = await makeRound(org.coordinator, org.enumeratorId, notes)
  second = await makeRound(org.coordinator, org.enumeratorId, notes)
  v1 = visit()
  const v2 = makeVisit(second, { farmCode: FARM.toLowerCase() })
  for (const v of [v1, v2]) {
    expect((await org.enumerator.post('/api/sync/visits', { visits: [v] })).status).toBe(200)
    expect((await org.coordinator.post(`/api/review/visits/${v.id}`, { action: 'accept' })).status).toBe(200)
  }
})
afterAll(closeTestDatabase)

describe('the pseudonymised export (the default)', () => {
  it('replaces the farm code by a keyed pseudonym, stable across rounds, and rounds positions to 2 decimals', async () => {
    const { status, body, rows } = await exportCsv('part=visits')
    expect(status).toBe(200)
    expect(String(body)).not.toContain(FARM)
    const [header, row] = rows
    expect(header).toEqual(expect.arrayContaining(['farm_pseudonym', 'lat', 'lon']))
    expect(header).not.toContain('farm_code')
    const cell = (name: string) => row![header!.indexOf(name)]
    expect(cell('farm_pseudonym')).toMatch(/^P-[0-9a-f]{12}$/)
    expect([cell('lat'), cell('lon')]).toEqual(['-13.10', '31.50'])
    // The same farm (any case) in another round: the same pseudonym, so analysts can follow it.
    const other = await exportCsv('part=visits', second.roundId)
    expect(other.rows[1]![other.rows[0]!.indexOf('farm_pseudonym')]).toBe(cell('farm_pseudonym'))
    // Keyed: not a plain hash of the code that anyone could recompute from a guess.
    for (const guess of [FARM, FARM.toLowerCase()]) {
      expect(cell('farm_pseudonym')).not.toBe(`P-${createHmac('sha256', '').update(guess).digest('hex').slice(0, 12)}`)
    }
  })

  it('leaves free-text answers out (they may name people)', async () => {
    const { body, rows } = await exportCsv('part=visits')
    expect(rows[0]).not.toContain('notes')
    expect(String(body)).not.toContain('Ngozi')
    const dictionary = await exportCsv('part=dictionary')
    expect(dictionary.rows.map(r => r[0])).toEqual(expect.arrayContaining(['farm_pseudonym', 'lat', 'lon']))
    expect(dictionary.rows.map(r => r[0])).not.toContain('notes')
  })

  it.each([['0', '-13', '32'], ['1', '-13.1', '31.5'], ['3', '-13.099', '31.501']])('rounds to %s decimals on request', async (precision, lat, lon) => {
    const { rows } = await exportCsv(`part=visits&precision=${precision}`)
    expect([rows[1]![rows[0]!.indexOf('lat')], rows[1]![rows[0]!.indexOf('lon')]]).toEqual([lat, lon])
  })

  it('leaves positions out on request, and refuses a precision it does not offer', async () => {
    const { rows } = await exportCsv('part=visits&precision=none')
    expect(rows[0]).not.toContain('lat')
    expect((await exportCsv('part=visits&precision=7')).status).toBe(400)
  })

  it('says in the read-me of the zip what it protects', async () => {
    const zip = await fetch(`${baseUrl()}/api/rounds/${round.roundId}/export?part=all`, { headers: { 'cookie': org.coordinator.cookieHeader(), 'x-forwarded-for': '10.9.2.1' } })
    const files = unzipSync(new Uint8Array(await zip.arrayBuffer()))
    expect(strFromU8(files['README.txt']!)).toMatch(/pseudonyms/)
    expect(strFromU8(files['visits.csv']!)).not.toContain(FARM)
  })
})

describe('the identifying export', () => {
  it('is refused without a stated reason', async () => {
    const before = await AuditEntry.count({ where: { organisationId: org.id, action: 'round.export_identifying' } })
    const answer = await exportCsv('part=visits&identifying=1')
    expect(answer.status).toBe(400)
    expect(JSON.stringify(answer.body)).toMatch(/Say why/)
    expect((await exportCsv('part=visits&identifying=1&reason=short')).status).toBe(400)
    expect(await AuditEntry.count({ where: { organisationId: org.id, action: 'round.export_identifying' } })).toBe(before)
  })

  it('gives farm codes, exact positions and free text (formulas neutralised), audited with the reason', async () => {
    const reason = 'Revisit list for the follow-up survey in Kalinde ward'
    const { status, rows } = await exportCsv(`part=visits&identifying=1&reason=${encodeURIComponent(reason)}`)
    expect(status).toBe(200)
    const [header, row] = rows
    const cell = (name: string) => row![header!.indexOf(name)]
    expect(cell('farm_code')).toBe(FARM)
    expect([cell('lat'), cell('lon')]).toEqual(['-13.0987654', '31.5012345'])
    // A text answer that a spreadsheet would run as a formula gets a leading apostrophe (server/utils/csv.ts).
    expect(cell('notes')).toBe('\'=HYPERLINK("http://x.example","Ngozi Albrechtsen")')
    const entry = await AuditEntry.findOne({ where: { organisationId: org.id, action: 'round.export_identifying' }, order: [['id', 'DESC']] })
    expect(entry!.details).toMatchObject({ reason, part: 'visits' })
    expect(entry!.entityId).toBe(String(round.roundId))
  })
})
