import { spawnSync } from 'node:child_process'
import { mkdtempSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { strFromU8, unzipSync } from 'fflate'
import { QueryTypes } from 'sequelize'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Round, User, Village, Visit } from '../../server/db/models'
import { runModel } from '../../shared/utils/stats'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { rectangular } from '../support/csv'
import { type Client, demoUser, freshClient } from '../support/server'

// The farm register across rounds: linking by farm code with the village check (sync, import, correction), the
// review's other rounds, the panel export, and models over several rounds checked against statsmodels and against
// the engine run on the exported rows.

const PY = '/usr/bin/python3'
let coordinator: Client
let enumerator: Client
let first: TestRound
let second: TestRound
let demoRounds: { main: number, earlier: number }

const sync = (visits: unknown[]) => enumerator.post<SyncBody>('/api/sync/visits', { visits })
const sql = <T extends object>(query: string, replacements: unknown[]) => testDatabase().query<T>(query, { replacements, type: QueryTypes.SELECT })
const farmIdOf = async (visitId: string) => (await sql<{ farmId: number | null }>('SELECT farm_id AS farmId FROM visits WHERE id = ?', [visitId]))[0]!.farmId

async function fitAndWait(body: unknown): Promise<ModelRunDetail> {
  // A pause (the statsmodels run) can leave a kept-alive socket that the server has just closed: one retry, since
  // a request on a socket closed before it arrived was never received.
  const post = () => coordinator.post<ModelRunSummary>('/api/models', body)
  const started = await post().catch(post)
  expect(started.status, JSON.stringify(started.body)).toBe(202)
  for (let i = 0; i < 400; i++) {
    const run = await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}`)
    if (run.body.status !== 'running') return run.body
    await new Promise(resolve => setTimeout(resolve, 250))
  }
  throw new Error('the fit did not finish in 100 s')
}

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  enumerator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  await enumerator.signIn(demoUser('enumerator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  first = await makeRound(coordinator, me!.id, [{ key: 'note', label: 'Note', type: 'text' }])
  // A second round of the same family on the same two villages, the enumerator in both.
  const made = await coordinator.post<{ id: number }>('/api/rounds', { name: `Later ${first.roundId}`, technology: 'test seed', season: '2027', copyFromRoundId: first.roundId })
  expect(made.status).toBe(200)
  const id = made.body.id
  expect((await coordinator.request('PUT', `/api/rounds/${id}/villages`, { villageIds: [first.assignedVillageId, first.otherVillageId] })).status).toBe(200)
  expect((await coordinator.request('PUT', `/api/rounds/${id}/assignments`, { assignments: [{ userId: me!.id, villageId: first.assignedVillageId }, { userId: me!.id, villageId: first.otherVillageId }] })).status).toBe(200)
  expect((await coordinator.request('PATCH', `/api/rounds/${id}`, { status: 'open' })).status).toBe(200)
  const detail = await coordinator.get<{ questionnaire: { id: number } }>(`/api/rounds/${id}`)
  second = { ...first, roundId: id, versionId: detail.body.questionnaire.id }
  const org = (await Round.findByPk(first.roundId))!.organisationId
  const demo = await Round.findAll({ where: { organisationId: org, technology: 'drought-tolerant sorghum seed (Ombara Gold)' }, order: [['id', 'ASC']] })
  demoRounds = { main: demo[0]!.id, earlier: demo[1]!.id }
})
afterAll(closeTestDatabase)

describe('the farm register', () => {
  it('holds every demo farm, with the visits of both demo rounds linked to it', async () => {
    const [linked] = await sql<{ total: number, linked: number, farms: number }>(`SELECT COUNT(*) AS total, COUNT(farm_id) AS linked,
      COUNT(DISTINCT farm_id) AS farms FROM visits WHERE round_id IN (?, ?)`, [demoRounds.main, demoRounds.earlier])
    expect(Number(linked!.linked)).toBe(Number(linked!.total))
    expect(Number(linked!.farms)).toBe(await Visit.count({ where: { roundId: demoRounds.main } }))
    const [both] = await sql<{ n: number }>(`SELECT COUNT(*) AS n FROM (SELECT farm_id FROM visits WHERE round_id IN (?, ?)
      GROUP BY farm_id HAVING COUNT(DISTINCT round_id) = 2) x`, [demoRounds.main, demoRounds.earlier])
    expect(Number(both!.n)).toBe(await Visit.count({ where: { roundId: demoRounds.earlier } }))
  })

  it('links a visit of a later round to the farm of the same code in the same village', async () => {
    const code = `PX-${Date.now().toString(36)}`
    const a = makeVisit(first, { farmCode: code }, { adopted: false, farm_size_ha: 1.5 })
    const b = makeVisit(second, { farmCode: code.toLowerCase() }, { adopted: true, farm_size_ha: 1.9 })
    expect((await sync([a])).body.counts.stored).toBe(1)
    expect((await sync([b])).body.counts.stored).toBe(1)
    const farmA = await farmIdOf(a.id)
    expect(farmA).not.toBeNull()
    expect(await farmIdOf(b.id)).toBe(farmA)
    const farms = await sql<{ code: string, villageId: number }>('SELECT code, village_id AS villageId FROM farms WHERE id = ?', [farmA])
    expect(farms).toEqual([{ code, villageId: first.assignedVillageId }])
    // Review of the later visit shows the earlier round.
    const other = await coordinator.get<{ farmLinked: boolean, visits: Array<{ roundId: number, adopted: number, answers: Record<string, unknown> }> }>(`/api/review/visits/${b.id}/other-rounds`)
    expect(other.status).toBe(200)
    expect(other.body.farmLinked).toBe(true)
    expect(other.body.visits.map(v => [v.roundId, v.adopted, v.answers.farm_size_ha])).toEqual([[first.roundId, 0, 1.5]])
    // A resend changes nothing.
    expect((await sync([b])).body.counts.duplicate).toBe(1)
    expect(await farmIdOf(b.id)).toBe(farmA)
  })

  it('flags, and does not link, a farm code registered in another village; a corrected code links it', async () => {
    const code = `PV-${Date.now().toString(36)}`
    const a = makeVisit(first, { farmCode: code })
    expect((await sync([a])).body.counts.stored).toBe(1)
    const elsewhere = makeVisit(second, { farmCode: code, villageId: first.otherVillageId, location: { kind: 'gps', lat: first.centre.lat + 0.2, lon: first.centre.lon, accuracyM: 5 } })
    const answer = await sync([elsewhere])
    expect(answer.body.counts.stored).toBe(1)
    const stored = (await Visit.findByPk(elsewhere.id))!
    const home = (await Village.findByPk(first.assignedVillageId))!
    expect(stored.flags.farmInOtherVillage).toBe(home.name)
    expect(await farmIdOf(elsewhere.id)).toBeNull()
    const other = await coordinator.get<{ farmLinked: boolean, visits: unknown[] }>(`/api/review/visits/${elsewhere.id}/other-rounds`)
    expect(other.body).toEqual({ farmLinked: false, visits: [] })
    // The reviewer corrects the mistyped code: a new farm of the visit's own village, linked, flag gone.
    const fixed = `${code}-B`
    const corrected = await coordinator.post(`/api/review/visits/${elsewhere.id}`, { action: 'farm_code', farmCode: fixed, reason: 'Code mistyped on the tablet' })
    expect(corrected.status, JSON.stringify(corrected.body)).toBe(200)
    const after = (await Visit.findByPk(elsewhere.id))!
    expect(after.farmCode).toBe(fixed)
    expect(after.flags.farmInOtherVillage).toBeUndefined()
    const farm = await farmIdOf(elsewhere.id)
    expect(farm).not.toBeNull()
    expect(await sql('SELECT village_id AS villageId FROM farms WHERE id = ?', [farm])).toEqual([{ villageId: first.otherVillageId }])
    // A bad code is a field error, nothing written.
    const bad = await coordinator.post<{ data: { fieldErrors: Record<string, string> } }>(`/api/review/visits/${elsewhere.id}`, { action: 'farm_code', farmCode: '=cmd|x', reason: 'Code mistyped' })
    expect(bad.status).toBe(400)
    expect((await Visit.findByPk(elsewhere.id))!.farmCode).toBe(fixed)
  })

  it('registers a batch\'s new code with the village of its earliest saved visit, linking and flagging in the same write', async () => {
    const code = `PN-${Date.now().toString(36)}`
    const saved = (minutesAgo: number) => new Date(Date.now() - minutesAgo * 60_000).toISOString()
    const timing = (minutesAgo: number) => ({ consentAt: saved(minutesAgo + 20), startedAt: saved(minutesAgo + 20), savedAt: saved(minutesAgo) })
    // Listed first but saved later, in the assigned village; saved earlier (and listed second) in the other village.
    const later = makeVisit(second, { farmCode: code, ...timing(5) })
    const earlier = makeVisit(second, { farmCode: code.toLowerCase(), villageId: first.otherVillageId, ...timing(60),
      location: { kind: 'gps', lat: first.centre.lat + 0.2, lon: first.centre.lon, accuracyM: 5 } })
    const answer = await sync([later, earlier])
    expect(answer.body.counts.stored).toBe(2)
    const farms = await sql<{ id: number, villageId: number }>('SELECT id, village_id AS villageId FROM farms WHERE organisation_id = ? AND code = ?',
      [(await Round.findByPk(second.roundId))!.organisationId, code])
    expect(farms.map(f => f.villageId)).toEqual([first.otherVillageId])
    expect(await farmIdOf(earlier.id)).toBe(farms[0]!.id)
    expect(await farmIdOf(later.id)).toBeNull()
    const other = (await Village.findByPk(first.otherVillageId))!
    expect((await Visit.findByPk(later.id))!.flags.farmInOtherVillage).toBe(other.name)
    expect((await Visit.findByPk(earlier.id))!.flags.farmInOtherVillage).toBeUndefined()
    // Two visits of one code in one round are also the duplicate-code flag, set after the commit.
    expect((await Visit.findByPk(later.id))!.flags.duplicateFarmCode).toBe(true)
  })

  it('keeps an imported row whose farm code belongs to another village in review, flagged', async () => {
    const code = `PI-${Date.now().toString(36)}`
    expect((await sync([makeVisit(first, { farmCode: code })])).body.counts.stored).toBe(1)
    const villages = await Village.findAll({ where: { id: [first.assignedVillageId, first.otherVillageId] } })
    const codeOf = (id: number) => villages.find(v => v.id === id)!.code
    const csv = `farm,village,adopted,farm_size_ha,household_size\n${code},${codeOf(first.otherVillageId)},yes,2,5\n${code}-N,${codeOf(first.assignedVillageId)},no,3,4\n`
    const mapping = { farmCode: 'farm', villageCode: 'village', questions: { adopted: 'adopted', farm_size_ha: 'farm_size_ha', household_size: 'household_size' } }
    const imported = await coordinator.post<{ message: string }>(`/api/rounds/${second.roundId}/imports`, { csv, fileName: 'past.csv', mapping, mode: 'all-or-nothing' })
    expect(imported.status, JSON.stringify(imported.body)).toBe(200)
    expect(imported.body.message).toMatch(/registered in another village/)
    const rows = await Visit.findAll({ where: { roundId: second.roundId, source: 'import' } })
    const flagged = rows.find(v => v.farmCode === code)!
    const clean = rows.find(v => v.farmCode === `${code}-N`)!
    expect(flagged.reviewState).toBe('received')
    expect(flagged.flags.farmInOtherVillage).toBeTruthy()
    expect(clean.reviewState).toBe('accepted')
    expect(await farmIdOf(clean.id)).not.toBeNull()
  })
})

describe('the panel export', () => {
  it('gives one row per registered farm and round, pseudonymised, the same pseudonym in every round', async () => {
    const answer = await coordinator.get<string>(`/api/rounds/${demoRounds.main}/panel?with=${demoRounds.earlier}&part=panel`)
    expect(answer.status).toBe(200)
    expect(answer.headers.get('content-type')).toMatch(/text\/csv/)
    const rows = rectangular(answer.body)
    const header = rows[0]!
    expect(header.slice(0, 5)).toEqual(['farm_pseudonym', 'round_number', 'round', 'village_code', 'village'])
    expect(header).not.toContain('farm_code')
    const body = rows.slice(1)
    const at = (name: string) => header.indexOf(name)
    const [counts] = await sql<{ n: number }>('SELECT COUNT(*) AS n FROM visits WHERE round_id IN (?, ?) AND review_state = \'accepted\' AND farm_id IS NOT NULL', [demoRounds.main, demoRounds.earlier])
    expect(body.length).toBe(Number(counts!.n))
    const keys = new Set(body.map(r => `${r[at('farm_pseudonym')]}|${r[at('round_number')]}`))
    expect(keys.size).toBe(body.length)
    for (const r of body) expect(r[at('farm_pseudonym')]).toMatch(/^P-[0-9a-f]{12}$/)
    // The round numbers follow the rounds' dates: the earlier round is 1.
    const earlierName = (await Round.findByPk(demoRounds.earlier))!.name
    expect(body.find(r => r[at('round')] === earlierName)![at('round_number')]).toBe('1')
    const seenTwice = new Map<string, number>()
    for (const r of body) seenTwice.set(r[at('farm_pseudonym')]!, (seenTwice.get(r[at('farm_pseudonym')]!) ?? 0) + 1)
    expect([...seenTwice.values()].filter(n => n === 2).length).toBe(await Visit.count({ where: { roundId: demoRounds.earlier, reviewState: 'accepted' } }))
  })

  it('identifies farms only with a reason, neutralises formulas, and zips a read-me', async () => {
    const refused = await coordinator.get(`/api/rounds/${first.roundId}/panel?with=${second.roundId}&part=panel&identifying=1`)
    expect(refused.status).toBe(400)
    const code = `PF-${Date.now().toString(36)}`
    const a = makeVisit(first, { farmCode: code }, { note: '=HYPERLINK("x")' })
    const b = makeVisit(second, { farmCode: code }, { note: '+1+1' })
    await sync([a, b])
    for (const v of [a, b]) expect((await coordinator.post(`/api/review/visits/${v.id}`, { action: 'accept' })).status).toBe(200)
    const answer = await coordinator.get<string>(`/api/rounds/${first.roundId}/panel?with=${second.roundId}&part=panel&identifying=1&reason=${encodeURIComponent('Revisit the farms next season')}`)
    expect(answer.status).toBe(200)
    const rows = rectangular(answer.body)
    const mine = rows.filter(r => r[0] === code)
    expect(mine.map(r => r[1])).toEqual(['1', '2'])
    const note = rows[0]!.indexOf('note')
    expect(mine.map(r => r[note])).toEqual(['\'=HYPERLINK("x")', '\'+1+1'])
    const zip = await fetch(`${process.env.FURROWCAST_TEST_URL}/api/rounds/${first.roundId}/panel?with=${second.roundId}`, { headers: { 'cookie': coordinator.cookieHeader(), 'x-forwarded-for': '10.77.1.2' } })
    const files = unzipSync(new Uint8Array(await zip.arrayBuffer()))
    expect(Object.keys(files).sort()).toEqual(['README.txt', 'panel.csv'])
    expect(strFromU8(files['README.txt']!)).toMatch(/one row per farm/)
    expect(strFromU8(files['panel.csv']!)).not.toContain('HYPERLINK')
  })

  it('keeps a purged visit pseudonymised even in the identifying panel while its farm has later visits', async () => {
    const code = `PP-${Date.now().toString(36)}`
    const a = makeVisit(first, { farmCode: code })
    const b = makeVisit(second, { farmCode: code })
    await sync([a, b])
    for (const v of [a, b]) expect((await coordinator.post(`/api/review/visits/${v.id}`, { action: 'accept' })).status).toBe(200)
    // As the retention purge leaves the first round's visit: names purged (its own code is then the pseudonym).
    await testDatabase().query('UPDATE visits SET names_purged_at = NOW(3) WHERE id = ?', { replacements: [a.id] })
    const answer = await coordinator.get<string>(`/api/rounds/${first.roundId}/panel?with=${second.roundId}&part=panel&identifying=1&reason=${encodeURIComponent('Revisit the farms next season')}`)
    expect(answer.status).toBe(200)
    const rows = rectangular(answer.body)
    const savedAt = rows[0]!.indexOf('saved_at')
    expect(rows.filter(r => r[0] === code).map(r => r[1])).toEqual(['2'])
    const purged = rows.filter(r => r[savedAt] === new Date(a.savedAt).toISOString() && r[1] === '1')
    expect(purged).toHaveLength(1)
    expect(purged[0]![0]).toMatch(/^P-[0-9a-f]{12}$/)
  })

  it('refuses rounds of another organisation and a single round', async () => {
    expect((await coordinator.get(`/api/rounds/${first.roundId}/panel?with=${first.roundId}`)).status).toBe(400)
    expect((await coordinator.get(`/api/rounds/${first.roundId}/panel?with=999999`)).status).toBe(404)
    expect((await coordinator.get(`/api/rounds/${first.roundId}/panel?with=abc`)).status).toBe(400)
  })
})

describe('models over several rounds', () => {
  const covariates = [{ key: 'farm_size_ha' }, { key: 'extension_contact' }, { key: 'dealer_distance_km' }]
  let pooled: ModelRunDetail
  let exported: string[][]

  beforeAll(async () => {
    const answer = await coordinator.get<string>(`/api/rounds/${demoRounds.main}/panel?with=${demoRounds.earlier}&part=panel`)
    exported = rectangular(answer.body)
  })

  it('pooled with round effects: coefficients and clustered SEs match statsmodels on the exported rows', async () => {
    pooled = await fitAndWait({ roundId: demoRounds.main, covariates, several: { roundIds: [demoRounds.earlier], model: 'pooled' } })
    expect(pooled.status, JSON.stringify(pooled.error)).toBe('done')
    const r = pooled.results!
    expect(r.rows.used).toBe(exported.length - 1)
    const roundTerm = r.coefficients.find(c => c.term.startsWith('_round['))!
    expect(roundTerm.label).toMatch(/^round: 2\. .* vs 1\. /)
    // The demo's later round was generated 0.35 higher on the latent scale (server/db/demo/second-round.ts).
    expect(roundTerm.estimate).toBeGreaterThan(0.15)
    expect(roundTerm.estimate).toBeLessThan(0.55)
    expect(r.rounds!.transitions).toHaveLength(1)
    const t = r.rounds!.transitions[0]!
    expect(t.farmsInBoth).toBe(await Visit.count({ where: { roundId: demoRounds.earlier, reviewState: 'accepted' } }))
    expect(t.stayedNon + t.adopted + t.disAdopted + t.stayedAdopter).toBe(t.farmsInBoth)
    expect(t.adopted).toBeGreaterThan(0)
    expect(t.disAdopted).toBeGreaterThan(0)

    // statsmodels 0.13 (Debian's python3-statsmodels): Probit with C(round_number) and cluster SEs by village.
    const dir = mkdtempSync(join(tmpdir(), 'panel-'))
    writeFileSync(join(dir, 'panel.csv'), `${exported.map(row => row.map(c => `"${c.replaceAll('"', '""')}"`).join(',')).join('\n')}\n`)
    const script = `
import sys, json, pandas as pd, statsmodels.formula.api as smf
d = pd.read_csv(sys.argv[1])
d['y'] = (d['adopted'] == 'yes').astype(float)
d['extension_contact'] = (d['extension_contact'] == 'yes').astype(float)
d['village_code'] = d['village_code'].astype('category').cat.codes
m = smf.probit('y ~ farm_size_ha + extension_contact + dealer_distance_km + C(round_number)', data=d).fit(disp=0, tol=1e-12, maxiter=200, cov_type='cluster', cov_kwds={'groups': d['village_code']})
print(json.dumps({'b': list(m.params.values), 'se': list(m.bse.values), 'names': list(m.params.index)}))
`
    const out = spawnSync(PY, ['-c', script, join(dir, 'panel.csv')], { encoding: 'utf8' })
    expect(out.status, out.stderr).toBe(0)
    const ref = JSON.parse(out.stdout) as { b: number[], se: number[], names: string[] }
    // statsmodels: Intercept, C(round_number)[T.2], then the covariates; ours: intercept, covariates, then the round.
    const ours = Object.fromEntries(r.coefficients.map(c => [c.term, c]))
    const pairs: Array<[string, string]> = [['Intercept', '(Intercept)'], ['farm_size_ha', 'farm_size_ha'], ['extension_contact', 'extension_contact'], ['dealer_distance_km', 'dealer_distance_km'], ['C(round_number)[T.2]', roundTerm.term]]
    for (const [theirs, mine] of pairs) {
      const j = ref.names.indexOf(theirs)
      expect(j, theirs).toBeGreaterThanOrEqual(0)
      expect(Math.abs(ours[mine]!.estimate - ref.b[j]!) / Math.abs(ref.b[j]!)).toBeLessThan(1e-6)
      expect(Math.abs(ours[mine]!.se! - ref.se[j]!) / ref.se[j]!).toBeLessThan(1e-5)
    }
  })

  it('farm random intercept with farm means (correlated random effects): the app agrees with the engine run on the export', async () => {
    const run = await fitAndWait({ roundId: demoRounds.main, covariates, link: 'probit', several: { roundIds: [demoRounds.earlier], model: 'farm-effects' } })
    expect(run.status, JSON.stringify(run.error)).toBe('done')
    const r = run.results!
    // Farm size changes between the demo's rounds; the distance to the dealer does not (no mean: it would duplicate
    // itself); the engine adds means for numbers only.
    expect(r.rounds!.farmMeans).toEqual(['farm_size_ha'])
    expect(r.coefficients.some(c => c.term === 'farm_size_ha__farm_mean')).toBe(true)
    expect(r.randomIntercept!.sigma.estimate).toBeGreaterThanOrEqual(0)
    expect(r.villages).toBeNull()
    const header = exported[0]!
    const at = (name: string) => header.indexOf(name)
    const rows = exported.slice(1).map(row => ({
      adopted: row[at('adopted')] === 'yes' ? 1 : 0,
      farm_size_ha: Number(row[at('farm_size_ha')]),
      extension_contact: row[at('extension_contact')] === 'yes',
      dealer_distance_km: Number(row[at('dealer_distance_km')]),
      village: row[at('village_code')],
      _round: `${row[at('round_number')]}. ${row[at('round')]}`,
      _farm: row[at('farm_pseudonym')]
    }))
    const local = runModel(rows, run.spec)
    expect(local.rows.used).toBe(r.rows.used)
    for (const c of r.coefficients) {
      const mine = local.coefficients.find(x => x.term === c.term)!
      expect(Math.abs(mine.estimate - c.estimate) / Math.max(1e-3, Math.abs(c.estimate)), c.term).toBeLessThan(1e-6)
    }
    expect(Math.abs(local.randomIntercept!.sigma.estimate - r.randomIntercept!.sigma.estimate)).toBeLessThan(1e-6)
    expect(local.rounds!.transitions).toEqual(r.rounds!.transitions)
  })

  it('reports the data as changed when a visit of the OTHER round changes, exports the transitions, and is not published', async () => {
    expect((await coordinator.get<ModelRunDetail>(`/api/models/${pooled.id}`)).body.dataChanged).toBe(false)
    const zip = await fetch(`${process.env.FURROWCAST_TEST_URL}/api/models/${pooled.id}/export?format=zip`, { headers: { 'cookie': coordinator.cookieHeader(), 'x-forwarded-for': '10.77.1.3' } })
    const files = unzipSync(new Uint8Array(await zip.arrayBuffer()))
    const transitions = rectangular(strFromU8(files['transitions.csv']!))
    expect(transitions[0]).toEqual(['from_round', 'to_round', 'farms_in_both', 'stayed_non_adopters', 'adopted', 'dis_adopted', 'stayed_adopters', 'adoption_rate_percent', 'dis_adoption_rate_percent'])
    expect(Number(transitions[1]![2])).toBe(pooled.results!.rounds!.transitions[0]!.farmsInBoth)
    const json = await coordinator.get<{ results: { rounds: { transitions: unknown[] } } }>(`/api/models/${pooled.id}/export?format=json`)
    expect(json.body.results.rounds.transitions).toEqual(pooled.results!.rounds!.transitions)
    const publish = await coordinator.post(`/api/models/${pooled.id}/publish`, { note: 'Two rounds together', targetRate: 0.3 })
    expect(publish.status).toBe(409)
    // One accepted visit of the earlier round is sent back: the run's data changed.
    const visit = await Visit.findOne({ where: { roundId: demoRounds.earlier, reviewState: 'accepted' }, order: [['id', 'DESC']] })
    expect((await coordinator.post(`/api/review/visits/${visit!.id}`, { action: 'send_back', reason: 'Check the farm size again' })).status).toBe(200)
    expect((await coordinator.get<ModelRunDetail>(`/api/models/${pooled.id}`)).body.dataChanged).toBe(true)
    expect((await coordinator.post(`/api/review/visits/${visit!.id}`, { action: 'accept' })).status).toBe(200)
  })

  it('refuses a several-rounds model with another round twice, a sampling plan or a question another round lacks', async () => {
    const twice = await coordinator.post('/api/models/preview', { roundId: demoRounds.main, covariates, several: { roundIds: [demoRounds.main], model: 'pooled' } })
    expect(twice.status).toBe(400)
    const survey = await coordinator.post('/api/models/preview', { roundId: demoRounds.main, covariates, villages: 'survey', weights: 'farm_size_ha', several: { roundIds: [demoRounds.earlier] } })
    expect(survey.status).toBe(400)
    const lacking = await coordinator.post<{ message: string }>('/api/models/preview', { roundId: demoRounds.main, covariates: [{ key: 'livestock_tlu' }], several: { roundIds: [first.roundId] } })
    expect(lacking.status).toBe(400)
    expect(lacking.body.message).toMatch(/Livestock owned is not asked in every chosen round/)
  })
})

describe('erasure', () => {
  it('replaces the farm code in the register by the erasure\'s opaque id', async () => {
    const code = `PE-${Date.now().toString(36)}`
    const a = makeVisit(first, { farmCode: code })
    const b = makeVisit(second, { farmCode: code })
    await sync([a, b])
    const farm = await farmIdOf(a.id)
    expect(farm).not.toBeNull()
    const erased = await coordinator.post<{ opaqueId: string, removed: Record<string, number> }>('/api/privacy/erasures', { farmCode: code, reason: 'The farmer withdrew consent' })
    expect(erased.status, JSON.stringify(erased.body)).toBe(200)
    expect(erased.body.removed['The farm register: the farm code that links its visits across rounds']).toBe(1)
    const rows = await sql<{ code: string }>('SELECT code FROM farms WHERE id = ?', [farm])
    expect(rows).toEqual([{ code: erased.body.opaqueId }])
    expect(await sql('SELECT id FROM farms WHERE code = ?', [code])).toEqual([])
  })
})
