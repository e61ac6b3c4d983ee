/**
 * Sample lists end to end through the real routes, MariaDB and fit worker: the all-or-nothing upload, who may see
 * the heads' names, non-interviews from the tablet, the sampling weights in the export and in a model run (equal to
 * hand-computed inverse selection probabilities), and the weighted survey-design fit against R's survey::svyglm
 * (Debian's r-cran-survey, through tests/reference/svyglm_ref.R, as tests/unit/engine/survey.test.ts does).
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SampleFarm, SampleVillage, User } from '../../server/db/models'
import type { FieldSetup } from '../../shared/types/field'
import type { ModelRunDetail } from '../../shared/types/models'
import type { RoundSample, SampleListProblem } from '../../shared/types/sample'
import { rectangular } from '../support/csv'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { fitAndWait } from '../support/models'
import { type Client, demoUser, freshClient } from '../support/server'
import { newPerson } from '../support/team'

let coordinator: Client
let enumerator: Client
let other: Client
let funder: Client
let round: TestRound

// Hand-computed (see tests/unit/sampling/weights.test.ts for the formula):
// village A: P = 0.5, N = 100 listed, n = 20 main-sample farms → π = 0.5 · 20/100 = 0.1  → weight 10
// village B: P = 0.2, N = 50 listed,  n = 10 main-sample farms → π = 0.2 · 10/50  = 0.04 → weight 25
const WEIGHT_A = 10
const WEIGHT_B = 25
const codesA = Array.from({ length: 20 }, (_, i) => `SA-${String(i + 1).padStart(3, '0')}`)
const codesB = Array.from({ length: 10 }, (_, i) => `SB-${String(i + 1).padStart(3, '0')}`)
const tableOf = (text: string) => {
  const [header, ...rows] = rectangular(text)
  return { header: header!, rows }
}
const listPath = (villageId: number) => `/api/rounds/${round.roundId}/sample/${villageId}`

function csvA(): string {
  const lines = ['farm_code,rank,head_name,hint,lat,lon']
  codesA.forEach((c, i) => lines.push(`${c},0,Head ${i} Amaro,Near the borehole ${i},,`))
  lines.push('SA-101,1,Reserve One Tolu,Past the mill,-13.1,31.5', 'SA-102,2,Reserve Two Tolu,By the school,,')
  return `${lines.join('\n')}\n`
}

// Answers that vary enough for a logit with two covariates and no separation.
function answersFor(i: number) {
  const farm = 0.5 + ((i * 37) % 23) / 5
  const household = 2 + ((i * 11) % 9)
  const adopted = ((i * 53) % 7) + farm / 2 > 4.2
  return { adopted, farm_size_ha: Math.round(farm * 10) / 10, household_size: household }
}

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  enumerator = freshClient()
  await enumerator.signIn(demoUser('enumerator').email)
  funder = freshClient()
  await funder.signIn(demoUser('funder').email)
  const admin = freshClient()
  await admin.signIn(demoUser('admin').email)
  const second = await newPerson(admin, 'enumerator')
  other = second.client
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id)
  // The second enumerator takes village B; the demo enumerator keeps village A.
  const assigned = await coordinator.request('PUT', `/api/rounds/${round.roundId}/assignments`, { assignments: [
    { userId: me!.id, villageId: round.assignedVillageId }, { userId: second.userId, villageId: round.otherVillageId }
  ] })
  expect(assigned.status).toBe(200)
}, 60_000)
afterAll(closeTestDatabase)

describe('uploading and typing a village\'s list', () => {
  it('refuses a file with bad rows whole, naming each row, and writes nothing', async () => {
    const bad = `${csvA()}SA-001,3,Twice,,,\nSA 200,0,Space in code,,,\nSA-201,x,No rank,,,\nSA-202,0,=HYPERLINK("x"),,95,31\n`
    const answer = await coordinator.request<{ message: string, data: { problems: SampleListProblem[] } }>('PUT', listPath(round.assignedVillageId), { csv: bad, fileName: 'a.csv', listedFarms: 100, selectionProbability: 0.5 })
    expect(answer.status).toBe(422)
    expect(answer.body.message).toMatch(/^The list was not saved: 4 problems to fix first\.$/)
    const rows = answer.body.data.problems.map(p => [p.row, p.column])
    expect(rows.sort()).toEqual([[24, 'farm_code'], [25, 'farm_code'], [26, 'rank'], [27, 'lat']])
    expect(await SampleFarm.count({ where: { roundId: round.roundId } })).toBe(0)
    expect(await SampleVillage.count({ where: { roundId: round.roundId } })).toBe(0)
  })

  it('refuses a main sample larger than the farms listed, and text with control characters', async () => {
    const tooMany = await coordinator.request<{ message: string, data: { problems: SampleListProblem[] } }>('PUT', listPath(round.assignedVillageId), { csv: csvA(), listedFarms: 10, selectionProbability: 0.5 })
    expect(tooMany.status).toBe(422)
    expect(tooMany.body.data.problems[0]!.message).toMatch(/main sample \(20 farms\) is larger than the 10 farms listed/)
    const nul = await coordinator.request('PUT', listPath(round.otherVillageId), { listedFarms: 50, selectionProbability: 0.2, farms: [{ farmCode: 'SB-001', rank: 0, headName: 'Bad\u0000name' }] })
    expect(nul.status).toBe(400)
    expect(await SampleFarm.count({ where: { roundId: round.roundId } })).toBe(0)
  })

  it('stores the uploaded file and the typed list, each with its weight', async () => {
    const a = await coordinator.request<{ farms: number, mainSample: number, weight: number }>('PUT', listPath(round.assignedVillageId), { csv: csvA(), fileName: 'a.csv', listedFarms: 100, selectionProbability: 0.5 })
    expect(a.status, JSON.stringify(a.body)).toBe(200)
    expect(a.body).toMatchObject({ farms: 22, mainSample: 20 })
    expect(a.body.weight).toBeCloseTo(WEIGHT_A, 12)
    const b = await coordinator.request<{ weight: number }>('PUT', listPath(round.otherVillageId), {
      listedFarms: 50, selectionProbability: 0.2, farms: [...codesB.map((c, i) => ({ farmCode: c, rank: 0, headName: `Bibi ${i} Koro`, hint: 'Hill road' })), { farmCode: 'SB-101', rank: 1 }]
    })
    expect(b.status, JSON.stringify(b.body)).toBe(200)
    expect(b.body.weight).toBeCloseTo(WEIGHT_B, 12)
  })
})

describe('who sees the names', () => {
  it('the assigned enumerator gets their own village\'s list with names in the tablet setup, and no other village\'s', async () => {
    const setup = await enumerator.get<FieldSetup>('/api/field/setup')
    const mine = setup.body.samples!.filter(s => s.roundId === round.roundId)
    expect(mine.map(s => s.villageId)).toEqual([round.assignedVillageId])
    expect(mine[0]!.farms.find(f => f.farmCode === 'SA-001')).toMatchObject({ headName: 'Head 0 Amaro', hint: 'Near the borehole 0', rank: 0, visited: false })
    expect(JSON.stringify(setup.body)).not.toContain('Bibi')
    const theirs = await other.get<FieldSetup>('/api/field/setup')
    const list = theirs.body.samples!.filter(s => s.roundId === round.roundId)
    expect(list.map(s => s.villageId)).toEqual([round.otherVillageId])
    expect(JSON.stringify(theirs.body)).not.toContain('Amaro')
  })

  it('funders and enumerators cannot read the round\'s lists', async () => {
    for (const client of [funder, enumerator]) {
      const answer = await client.get(`/api/rounds/${round.roundId}/sample`)
      expect(answer.status).toBe(403)
      expect(JSON.stringify(answer.body)).not.toContain('Amaro')
    }
    const overview = await funder.get('/api/overview')
    expect(JSON.stringify(overview.body)).not.toContain('Amaro')
  })
})

describe('non-interviews, visits, response rates and weights', () => {
  let visitIds: string[] = []

  it('takes a refusal with its replacement from the assigned enumerator only', async () => {
    const recordedAt = new Date().toISOString()
    const ok = await enumerator.post<{ results: Array<{ status: string }> }>('/api/field/sample-outcomes', { outcomes: [
      { roundId: round.roundId, villageId: round.assignedVillageId, farmCode: 'SA-020', outcome: 'refused', note: 'Declined: busy at the market', replacedBy: 'SA-101', recordedAt },
      { roundId: round.roundId, villageId: round.assignedVillageId, farmCode: 'SA-019', outcome: 'absent', note: 'Nobody at home twice', replacedBy: null, recordedAt },
      { roundId: round.roundId, villageId: round.otherVillageId, farmCode: 'SB-001', outcome: 'moved', note: 'Not my village', recordedAt },
      { roundId: round.roundId, villageId: round.assignedVillageId, farmCode: 'SA-001', outcome: 'refused', note: 'Replacement from the main sample', replacedBy: 'SA-002', recordedAt }
    ] })
    expect(ok.status).toBe(200)
    expect(ok.body.results.map(r => r.status)).toEqual(['stored', 'stored', 'rejected', 'rejected'])
    const noReason = await enumerator.post('/api/field/sample-outcomes', { outcomes: [{ roundId: round.roundId, villageId: round.assignedVillageId, farmCode: 'SA-018', outcome: 'refused', note: '', recordedAt }] })
    expect(noReason.status).toBe(400)
    const farm = await SampleFarm.findOne({ where: { roundId: round.roundId, farmCode: 'SA-020' } })
    expect(farm).toMatchObject({ outcome: 'refused', replacedBy: 'SA-101', outcomeNote: 'Declined: busy at the market' })
  })

  it('weights every accepted visit of a listed farm in the export; a farm not on the list has none', async () => {
    // Village A: 18 main farms and the replacement SA-101; a farm not on the list. Village B: all 10.
    const visitsA = [...codesA.slice(0, 18), 'SA-101', 'SA-999'].map((code, i) => makeVisit(round, { farmCode: code }, answersFor(i)))
    const visitsB = codesB.map((code, i) => makeVisit(round, { farmCode: code, villageId: round.otherVillageId, location: { kind: 'gps', lat: round.centre.lat + 0.2, lon: round.centre.lon, accuracyM: 5 } }, answersFor(100 + i)))
    expect((await enumerator.post('/api/sync/visits', { visits: visitsA })).status).toBe(200)
    expect((await other.post('/api/sync/visits', { visits: visitsB })).status).toBe(200)
    visitIds = [...visitsA, ...visitsB].map(v => v.id)
    for (const id of visitIds) expect((await coordinator.post(`/api/review/visits/${id}`, { action: 'accept' })).status).toBe(200)
    const csv = await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits&identifying=1&reason=${encodeURIComponent('checking the sampling weights')}`)
    expect(csv.status).toBe(200)
    const table = tableOf(csv.body)
    const weightOf = (code: string) => table.rows.find(r => r[table.header.indexOf('farm_code')] === code)![table.header.indexOf('sampling_weight')]
    expect(Number(weightOf('SA-001'))).toBeCloseTo(WEIGHT_A, 12)
    expect(Number(weightOf('SA-101'))).toBeCloseTo(WEIGHT_A, 12) // a replacement weighs as the farm it replaces
    expect(Number(weightOf('SB-004'))).toBeCloseTo(WEIGHT_B, 12)
    expect(weightOf('SA-999')).toBe('')
  })

  it('shows response rates per village to the coordinator', async () => {
    const sample = await coordinator.get<RoundSample>(`/api/rounds/${round.roundId}/sample`)
    const a = sample.body.villages.find(v => v.villageId === round.assignedVillageId)!
    expect(a.rates).toEqual({ mainSample: 20, interviewed: 18, refused: 1, absent: 1, moved: 0, replacementsUsed: 1, responseRate: 0.9, completion: 0.95 })
    expect(a.weight).toBeCloseTo(WEIGHT_A, 12)
    expect(a.farms.find(f => f.farmCode === 'SA-101')).toMatchObject({ visited: true, headName: 'Reserve One Tolu' })
    const b = sample.body.villages.find(v => v.villageId === round.otherVillageId)!
    expect(b.rates).toMatchObject({ mainSample: 10, interviewed: 10, responseRate: 1 })
  })

  let run: ModelRunDetail
  let fittedExport: { body: string, status: number }
  it('gives the model run the hand-computed weights', async () => {
    run = await fitAndWait(coordinator, { roundId: round.roundId, covariates: [{ key: 'farm_size_ha' }, { key: 'household_size' }], link: 'logit', villages: 'survey', weights: 'sample-lists' })
    expect(run.status, JSON.stringify(run.error)).toBe('done')
    const results = run.results!
    // 19 listed visits in A, 10 in B; the unlisted one is left out for want of a weight.
    expect(results.rows).toMatchObject({ totalRows: 30, used: 29, dropped: 1 })
    expect(results.rows.byVariable).toEqual([{ variable: 'sample-lists', label: 'sampling weight (farm not on a sample list)', count: 1 }])
    expect(results.fit.weightSum).toBeCloseTo(19 * WEIGHT_A + 10 * WEIGHT_B, 9)
    fittedExport = await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits&identifying=1&reason=${encodeURIComponent('checking against svyglm')}`)
    expect(fittedExport.status).toBe(200)
  })

  it('refuses a fit by the lists while a village\'s weight can\'t be computed', async () => {
    const put = await coordinator.request('PUT', listPath(round.otherVillageId), { listedFarms: 0, selectionProbability: 0.2, farms: codesB.map(c => ({ farmCode: c, rank: 0 })) })
    expect(put.status).toBe(200)
    const fit = await coordinator.post<{ message: string }>('/api/models', { roundId: round.roundId, covariates: [{ key: 'farm_size_ha' }], link: 'logit', villages: 'survey', weights: 'sample-lists' })
    expect(fit.status).toBe(400)
    expect(fit.body.message).toMatch(/The weight can't be computed for village Test village \w+B: the number of farms listed is 0\./)
    // The earlier fit is now out of date: the list changed.
    const again = await coordinator.get<ModelRunDetail>(`/api/models/${run.id}`)
    expect(again.body.dataChanged).toBe(true)
  })

  it('erases the head\'s name and hint with the farm at the farmer\'s request', async () => {
    const before = await SampleFarm.findOne({ where: { roundId: round.roundId, farmCode: 'SA-002' } })
    expect(before!.headName).toBe('Head 1 Amaro')
    const erased = await coordinator.post<{ opaqueId?: string }>('/api/privacy/erasures', { farmCode: 'SA-002', reason: 'The farmer withdrew consent at the meeting' })
    expect(erased.status, JSON.stringify(erased.body)).toBe(200)
    expect(await SampleFarm.count({ where: { farmCode: 'SA-002' } })).toBe(0)
    const row = (await SampleFarm.findByPk(before!.id))!
    expect(row).toMatchObject({ headName: null, hint: null, lat: null, lon: null })
    expect(row.namesPurgedAt).not.toBeNull()
    expect(row.farmCode).toMatch(/^E-/)
    const sample = await coordinator.get<RoundSample>(`/api/rounds/${round.roundId}/sample`)
    expect(JSON.stringify(sample.body)).not.toContain('Head 1 Amaro')
  })

  it('erases a listed farm that was never visited (a refusal): its name and hint go too', async () => {
    const footprint = await coordinator.get<{ visits: number, listed: number }>('/api/privacy/farm?code=SA-020')
    expect(footprint.status).toBe(200)
    expect(footprint.body.visits).toBe(0)
    expect(footprint.body.listed).toBeGreaterThanOrEqual(1)
    const row = (await SampleFarm.findOne({ where: { roundId: round.roundId, farmCode: 'SA-020' } }))!
    expect(row.headName).toBe('Head 19 Amaro')
    const erased = await coordinator.post('/api/privacy/erasures', { farmCode: 'SA-020', reason: 'Asked through the village chair to be removed' })
    expect(erased.status, JSON.stringify(erased.body)).toBe(200)
    expect(await SampleFarm.findByPk(row.id)).toMatchObject({ headName: null, hint: null, outcomeNote: null, outcome: 'refused' })
    expect((await coordinator.post('/api/privacy/erasures', { farmCode: 'SA-020', reason: 'Asked through the village chair to be removed' })).status).toBe(404)
  })

  it('matches R survey::svyglm with the same weights and villages as PSUs', async () => {
    // Last in the file, on the export read right after the fit: R's start-up outlasts the server's keep-alive, and
    // a request on the closed connection would fail for reasons of its own.
    const csv = fittedExport
    const probe = spawnSync('Rscript', ['-e', 'suppressPackageStartupMessages({library(survey); library(jsonlite)})'], { encoding: 'utf8' })
    expect(probe.status, `R with survey and jsonlite is needed: ${probe.stderr}`).toBe(0)
    const table = tableOf(csv.body)
    const col = (name: string) => table.header.indexOf(name)
    const rows = table.rows.filter(r => r[col('sampling_weight')] !== '')
    const X = rows.flatMap(r => [1, Number(r[col('farm_size_ha')]), Number(r[col('household_size')])])
    const dir = mkdtempSync(join(tmpdir(), 'svyglm-sample-'))
    writeFileSync(join(dir, 'in.json'), JSON.stringify([{
      id: 'sample-lists', link: 'logit', k: 3, X,
      y: rows.map(r => (r[col('adopted')] === 'yes' ? 1 : 0)),
      w: rows.map(r => Number(r[col('sampling_weight')])),
      psu: rows.map(r => r[col('village_code')]), strata: null, fpc: null
    }]))
    const script = fileURLToPath(new URL('../reference/svyglm_ref.R', import.meta.url))
    const r = spawnSync('Rscript', [script, join(dir, 'in.json'), join(dir, 'out.json')], { encoding: 'utf8' })
    expect(r.status, r.stderr).toBe(0)
    const [ref] = JSON.parse(readFileSync(join(dir, 'out.json'), 'utf8')) as Array<{ coef: number[], se: number[], df: number }>
    const ours = run.results!.coefficients
    expect(ours).toHaveLength(3)
    ours.forEach((c, j) => {
      expect(Math.abs(c.estimate - ref!.coef[j]!) / Math.max(1e-8, Math.abs(ref!.coef[j]!))).toBeLessThan(1e-6)
      expect(Math.abs(c.se! - ref!.se[j]!) / ref!.se[j]!).toBeLessThan(1e-5)
    })
  })
})
