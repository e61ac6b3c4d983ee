import { randomUUID } from 'node:crypto'
import { QueryTypes } from 'sequelize'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { ErasureResult } from '../../shared/types/privacy'
import { Organisation, Round, Visit } from '../../server/db/models'
import { rowsOf } from '../../shared/utils/schemas/groups'
import { closeTestDatabase, testDatabase } from '../support/database'
import { rectangular } from '../support/csv'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'
import { baseUrl } from '../support/server'

// Free text inside a repeated group's rows (a plot's note) can name people and places as any top-level free text
// can: erasure on request and the retention purge blank it in every row, and the pseudonymised exports leave it out.
// Checked in MariaDB (every table), in the plot table export and in the zip. Invented organisation and farmers.

let org: TestOrganisation
let round: TestRound
const DAY = 24 * 3600 * 1000
const ERASED_NAME = 'Ruzindana Okwuosa-Pell'
const KEPT_NAME = 'Teodora Mwakasege'
const PLOTS = {
  key: 'plots',
  label: 'Plots',
  questions: [
    { key: 'plot_size_ha', label: 'Plot size', type: 'number', unit: 'ha', min: 0.01, max: 20, required: true },
    { key: 'plot_note', label: 'Note on the plot', type: 'text', maxLength: 200 }
  ]
}
const plot = (size: number, note?: string) => ({ row: randomUUID(), plot_size_ha: size, ...(note ? { plot_note: note } : {}) })
let erasedFarm: ReturnType<typeof makeVisit>
let keptFarm: ReturnType<typeof makeVisit>

/** The tables where a value still appears, in any column of any row. */
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

const exportText = async (query: string) => {
  const answer = await org.coordinator.get<string>(`/api/rounds/${round.roundId}/export?${query}`)
  expect(answer.status).toBe(200)
  return answer.body
}

beforeAll(async () => {
  testDatabase()
  org = await makeOrganisation('Mbarazi Hills Seed Growers')
  round = await makeRound(org.coordinator, org.enumeratorId)
  const saved = await org.coordinator.request('PUT', `/api/rounds/${round.roundId}/questionnaire`, { questions: [
    { key: 'farm_size_ha', label: 'Farm size', type: 'number', unit: 'ha', min: 0, max: 50, required: true },
    { key: 'household_size', label: 'Household size', type: 'whole', min: 1, max: 30, required: true }
  ], groups: [PLOTS] })
  expect(saved.status, JSON.stringify(saved.body)).toBe(200)
  round = { ...round, versionId: (saved.body as { id: number }).id }
  erasedFarm = makeVisit(round, { farmCode: `MH-${randomUUID().slice(0, 8)}` }, { plots: [plot(1.2, `Rented from ${ERASED_NAME}`), plot(0.4), plot(0.8, `${ERASED_NAME}'s brother farms it`)] })
  keptFarm = makeVisit(round, { farmCode: `MH-${randomUUID().slice(0, 8)}` }, { plots: [plot(2.5, `Borrowed from ${KEPT_NAME}`)] })
  const sync = await org.enumerator.post<SyncBody>('/api/sync/visits', { visits: [erasedFarm, keptFarm] })
  expect(sync.status).toBe(200)
  expect(sync.body.counts.stored).toBe(2)
  for (const v of [erasedFarm, keptFarm]) expect((await org.coordinator.post(`/api/review/visits/${v.id}`, { action: 'accept' })).status).toBe(200)
  await Organisation.update({ settings: { ...(await Organisation.findByPk(org.id))!.settings, privacy: { keepAnswersAfterErasure: true, retentionDays: { photos: null, gps: null, names: null } } } }, { where: { id: org.id } })
})
afterAll(closeTestDatabase)

describe('free text inside plots', () => {
  it('is left out of the pseudonymised plot table and zip, and kept in the identifying one', async () => {
    const plots = rectangular(await exportText('part=rows&group=plots'))
    expect(plots[0]).not.toContain('plot_note')
    expect(plots.filter(r => r[0] === erasedFarm.id)).toHaveLength(3)
    const zip = await fetch(`${baseUrl()}/api/rounds/${round.roundId}/export?part=all`, { headers: { 'cookie': org.coordinator.cookieHeader(), 'x-forwarded-for': '10.9.3.1' } })
    expect(zip.status).toBe(200)
    const { unzipSync, strFromU8 } = await import('fflate')
    const files = unzipSync(Buffer.from(await zip.arrayBuffer()))
    expect(Object.keys(files)).toContain('plots.csv')
    for (const [name, content] of Object.entries(files)) {
      expect(strFromU8(content), name).not.toContain(ERASED_NAME)
      expect(strFromU8(content), name).not.toContain(KEPT_NAME)
      if (name === 'plots-dictionary.csv') expect(strFromU8(content)).not.toContain('plot_note')
    }
    const identifying = await exportText(`part=rows&group=plots&identifying=1&reason=${encodeURIComponent('Checking plot notes with the field team')}`)
    expect(identifying).toContain(ERASED_NAME)
  })

  it('stays out of the pseudonymised plot table when a later version asks the same key as another kind', async () => {
    const saved = await org.coordinator.request('PUT', `/api/rounds/${round.roundId}/questionnaire`, { questions: [
      { key: 'farm_size_ha', label: 'Farm size', type: 'number', unit: 'ha', min: 0, max: 50, required: true },
      { key: 'household_size', label: 'Household size', type: 'whole', min: 1, max: 30, required: true }
    ], groups: [{ ...PLOTS, questions: [PLOTS.questions[0], { key: 'plot_note', label: 'Kind of note', type: 'choice', options: [{ value: 'owned', label: 'Owned' }, { value: 'rented', label: 'Rented' }] }] }] })
    expect(saved.status, JSON.stringify(saved.body)).toBe(200)
    const plots = rectangular(await exportText('part=rows&group=plots'))
    const column = plots[0]!.indexOf('plot_note')
    expect(column).toBeGreaterThan(0)
    const mine = plots.filter(r => r[0] === erasedFarm.id || r[0] === keptFarm.id)
    expect(mine).toHaveLength(4)
    for (const r of mine) expect(r[column]).toBe('')
    expect(plots.flat().join(' ')).not.toContain(ERASED_NAME)
    expect(plots.flat().join(' ')).not.toContain(KEPT_NAME)
  })

  it('is blanked in every row by erasure on request, the plots\' other answers kept, another farm untouched', async () => {
    const answer = await org.coordinator.post<ErasureResult>('/api/privacy/erasures', { farmCode: erasedFarm.farmCode, reason: 'The farmer withdrew consent at the field day' })
    expect(answer.status, JSON.stringify(answer.body)).toBe(200)
    expect(answer.body).toMatchObject({ visits: 1, keptAnswers: true })
    const stored = (await Visit.findByPk(erasedFarm.id))!
    const rows = rowsOf(stored.answers, 'plots')
    expect(rows.map(r => r.plot_size_ha)).toEqual([1.2, 0.4, 0.8])
    expect(rows.map(r => r.row)).toEqual(erasedFarm.answers.plots.map(r => r.row))
    for (const r of rows) expect(r).not.toHaveProperty('plot_note')
    expect(await tablesHolding(ERASED_NAME, erasedFarm.farmCode)).toEqual([])

    const other = rowsOf((await Visit.findByPk(keptFarm.id))!.answers, 'plots')
    expect(other[0]!.plot_note).toBe(`Borrowed from ${KEPT_NAME}`)
    // The review route shows the erased visit's plots without the note and still accepts a correction of a plot.
    const fix = await org.coordinator.post(`/api/review/visits/${erasedFarm.id}`, { action: 'correct', answers: { plots: rows.map((r, i) => i === 1 ? { ...r, plot_size_ha: 0.45 } : r) }, reason: 'Plot measured again' })
    expect(fix.status, JSON.stringify(fix.body)).toBe(200)
  })

  it('is blanked in every row by the retention purge of names', async () => {
    expect((await org.coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'closed' })).status).toBe(200)
    await Round.update({ closedAt: new Date(Date.now() - 10 * DAY) }, { where: { id: round.roundId } })
    const saved = await org.admin.request('PUT', '/api/settings/privacy', { keepAnswersAfterErasure: true, retentionDays: { photos: null, gps: null, names: 5 } })
    expect(saved.status).toBe(200)
    expect((await org.admin.post('/api/settings/privacy/purge')).status).toBe(200)

    const rows = rowsOf((await Visit.findByPk(keptFarm.id))!.answers, 'plots')
    expect(rows).toHaveLength(1)
    expect(rows[0]!.plot_size_ha).toBe(2.5)
    expect(rows[0]).not.toHaveProperty('plot_note')
    expect(await tablesHolding(KEPT_NAME, ERASED_NAME)).toEqual([])
    // Even the identifying export has nothing left to give.
    const identifying = await exportText(`part=rows&group=plots&identifying=1&reason=${encodeURIComponent('Checking plot notes after the purge')}`)
    expect(identifying).not.toContain(KEPT_NAME)
  })
})
