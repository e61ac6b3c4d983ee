import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Organisation, User } from '../../server/db/models'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import type { MapVillage } from '../../shared/types/overview'
import { closeTestDatabase, testDatabase } from '../support/database'
import { uniqueEmail } from '../support/outbox'
import { type Client, DEMO, demoUser, freshClient } from '../support/server'

// The differencing attack on hidden villages, against an invented programme of its own: five villages with
// 8, 10, 25, 30 and 40 farms, a minimum of 9 visits. A funder who subtracts the shown villages from every round
// figure (and from scenarios aimed at the hidden village) must recover nothing about it.

const MIN = 9
const SIZES: Record<string, number> = { A: 8, B: 10, C: 25, D: 30, E: 40 }
let coordinator: Client
let funder: Client
let roundId: number
let codes: Record<string, string>
const truth: Record<string, { n: number, adopters: number }> = {}

async function signedIn(organisationId: number, email: string, role: string) {
  const { passwordHash } = (await User.findOne({ where: { email: demoUser('admin').email } }))!
  await User.create({ organisationId, email, name: `Test ${role}`, role: role as 'coordinator', passwordHash, lastSignInAt: null })
  const client = freshClient()
  await client.signIn(email, DEMO.password)
  return client
}

async function ok<T>(answer: Promise<{ status: number, body: T }>, status = 200): Promise<T> {
  const a = await answer
  if (a.status !== status) throw new Error(`${a.status} ${JSON.stringify(a.body).slice(0, 300)}`)
  return a.body
}

beforeAll(async () => {
  testDatabase()
  const suffix = Math.random().toString(36).slice(2, 8)
  const organisation = await Organisation.create({
    name: 'Mopane Valley Growers',
    slug: `mopane-valley-${suffix}`,
    settings: { defaultClusterVariable: 'village', minVisitsForFunders: MIN, funderOrganisations: [{ name: 'Kestrel Rural Fund', emailDomain: `kestrel-${suffix}.example` }] }
  })
  coordinator = await signedIn(organisation.id, uniqueEmail('mopane-coordinator'), 'coordinator')
  funder = await signedIn(organisation.id, `analyst-${suffix}@kestrel-${suffix}.example`, 'funder')

  codes = {}
  const villageIds: number[] = []
  for (const [i, key] of Object.keys(SIZES).entries()) {
    codes[key] = `MV${suffix}${key}`.toUpperCase()
    const v = await ok(coordinator.post<{ id: number }>('/api/villages', { code: codes[key], name: `Mopane ${key}`, district: 'Mopane Valley', centreLat: -17 - i * 0.1, centreLon: 27 }))
    villageIds.push(v.id)
  }
  roundId = (await ok(coordinator.post<{ id: number }>('/api/rounds', { name: 'Mopane storage bags', technology: 'hermetic storage bags', season: '2026' }))).id
  await ok(coordinator.request('PUT', `/api/rounds/${roundId}/questionnaire`, { questions: [{ key: 'farm_size_ha', label: 'Farm size', type: 'number', min: 0, max: 50, required: true }] }))
  await ok(coordinator.request('PUT', `/api/rounds/${roundId}/villages`, { villageIds }))
  await ok(coordinator.request('PATCH', `/api/rounds/${roundId}`, { status: 'open' }))

  // Past data through the CSV import: adoption rises with farm size, with a fixed pattern of exceptions.
  const lines = ['farm,village,adopted,farm_size_ha']
  let farm = 0
  for (const [key, n] of Object.entries(SIZES)) {
    truth[key] = { n, adopters: 0 }
    for (let i = 0; i < n; i++) {
      const size = 0.5 + ((farm * 37) % 40) / 10
      const adopted = (size > 2.2) !== (farm % 7 === 0)
      if (adopted) truth[key]!.adopters++
      lines.push(`MV-${farm++},${codes[key]},${adopted ? 'yes' : 'no'},${size}`)
    }
  }
  await ok(coordinator.post(`/api/rounds/${roundId}/imports`, {
    csv: `${lines.join('\n')}\n`, fileName: 'mopane.csv', mode: 'all-or-nothing',
    mapping: { farmCode: 'farm', villageCode: 'village', questions: { adopted: 'adopted', farm_size_ha: 'farm_size_ha' } }
  }))

  const started = await ok(coordinator.post<ModelRunSummary>('/api/models', { roundId, covariates: [{ key: 'farm_size_ha' }] }), 202)
  let run: ModelRunDetail | undefined
  for (let i = 0; i < 160 && run?.status !== 'done'; i++) {
    run = await ok(coordinator.get<ModelRunDetail>(`/api/models/${started.id}`))
    if (run.status === 'failed') throw new Error(JSON.stringify(run))
    if (run.status !== 'done') await new Promise(resolve => setTimeout(resolve, 250))
  }
  // One scenario for everyone, one aimed at the hidden village alone.
  await ok(coordinator.post(`/api/models/${started.id}/scenarios`, { scenarios: [
    { name: 'One more hectare', covariate: 'farm_size_ha', shift: 1 },
    { name: 'Aimed at A', covariate: 'farm_size_ha', shift: 3, villages: [codes.A] }
  ] }))
  await ok(coordinator.post(`/api/models/${started.id}/publish`, { note: 'Mopane results for planning', scenarioNames: ['One more hectare', 'Aimed at A'] }))
})
afterAll(closeTestDatabase)

interface RoundFigures { roundId: number, farmsVisited: number, observedRate: number, predicted: { estimate: number, ciLow: number | null }, suppressedVillages: number, villages: number, scenarios: Array<{ name: string, change: number }> }

describe('a funder subtracting shown villages from the round figures', () => {
  let round: RoundFigures
  let villages: MapVillage[]

  beforeAll(async () => {
    round = (await ok(funder.get<RoundFigures[]>('/api/overview'))).find(r => r.roundId === roundId)!
    villages = (await ok(funder.get<{ villages: MapVillage[] }>(`/api/overview/${roundId}`))).villages
  })

  it('hides the small village and, with it, the next smallest', () => {
    const hidden = villages.filter(v => v.suppressed).map(v => v.code).sort()
    expect(hidden).toEqual([codes.A, codes.B].sort())
    for (const v of villages.filter(v => v.suppressed)) expect(v).toMatchObject({ visits: null, observedRate: null, predicted: null, scenarios: {} })
    expect(round.suppressedVillages).toBe(2)
  })

  it('recovers nothing: totals minus shown villages leave no farms and no adopters', () => {
    const shown = villages.filter(v => !v.suppressed)
    const shownVisits = shown.reduce((s, v) => s + v.visits!, 0)
    const shownAdopters = shown.reduce((s, v) => s + v.visits! * v.observedRate!, 0)
    // The attack: round total minus the shown villages.
    const recoveredVisits = round.farmsVisited - shownVisits
    const recoveredAdopters = round.farmsVisited * round.observedRate - shownAdopters
    expect(recoveredVisits).toBe(0)
    expect(recoveredAdopters).toBeCloseTo(0, 9)
    expect(recoveredVisits).not.toBe(truth.A!.n)
    // The predicted figure, too, is over the shown villages only, and carries no interval whose midpoint would
    // give the full-round figure back.
    const shownPredicted = shown.reduce((s, v) => s + v.visits! * v.predicted!.estimate, 0) / shownVisits
    expect(round.predicted.estimate).toBeCloseTo(shownPredicted, 12)
    expect(round.predicted.ciLow).toBeNull()
  })

  it('even a funder who knows the true total from elsewhere learns only a group of two villages above the minimum', () => {
    const trueTotal = Object.values(truth).reduce((s, t) => s + t.n, 0)
    const group = trueTotal - round.farmsVisited
    expect(group).toBe(truth.A!.n + truth.B!.n)
    expect(group).toBeGreaterThanOrEqual(MIN)
  })

  it('a scenario aimed at the hidden village changes nothing a funder can see', () => {
    const aimed = round.scenarios.find(s => s.name === 'Aimed at A')!
    expect(aimed.change).toBe(0)
    const everyone = round.scenarios.find(s => s.name === 'One more hectare')!
    const shown = villages.filter(v => !v.suppressed)
    const expected = shown.reduce((s, v) => s + v.visits! * (v.scenarios['One more hectare']! - v.predicted!.estimate), 0) / shown.reduce((s, v) => s + v.visits!, 0)
    expect(everyone.change).toBeCloseTo(expected, 6)
  })
})
