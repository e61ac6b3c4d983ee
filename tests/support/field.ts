import { randomUUID } from 'node:crypto'
import type { Client } from './server'

export interface TestRound {
  roundId: number
  versionId: number
  assignedVillageId: number
  otherVillageId: number
  centre: { lat: number, lon: number }
}

let counter = 0

/** A fresh open round made through the coordinator's routes: two villages, the enumerator assigned to the first. */
export async function makeRound(coordinator: Client, enumeratorId: number, extraQuestions: unknown[] = []): Promise<TestRound> {
  const tag = `${Date.now().toString(36)}${(counter++).toString(36)}`.toUpperCase()
  const centre = { lat: -13.1, lon: 31.5 }
  const village = async (suffix: string, lat: number) => {
    const answer = await coordinator.post<{ id: number }>('/api/villages', {
      code: `T${tag}${suffix}`.slice(0, 32), name: `Test village ${tag}${suffix}`, district: 'Test district', centreLat: lat, centreLon: centre.lon
    })
    if (answer.status !== 200) throw new Error(`village: ${answer.status} ${JSON.stringify(answer.body)}`)
    return answer.body.id
  }
  const assignedVillageId = await village('A', centre.lat)
  const otherVillageId = await village('B', centre.lat + 0.2)
  const round = await coordinator.post<{ id: number }>('/api/rounds', { name: `Round ${tag}`, technology: 'test seed', season: '2026' })
  if (round.status !== 200) throw new Error(`round: ${round.status} ${JSON.stringify(round.body)}`)
  const roundId = round.body.id
  const put = async (path: string, body: unknown) => {
    const answer = await coordinator.request('PUT', path, body)
    if (answer.status !== 200) throw new Error(`${path}: ${answer.status} ${JSON.stringify(answer.body)}`)
    return answer.body
  }
  await put(`/api/rounds/${roundId}/questionnaire`, { questions: [
    { key: 'farm_size_ha', label: 'Farm size', type: 'number', unit: 'ha', min: 0, max: 50, required: true },
    { key: 'household_size', label: 'Household size', type: 'whole', min: 1, max: 30, required: true },
    { key: 'group_member', label: 'Farmer group member?', type: 'yesno' },
    ...extraQuestions
  ] })
  await put(`/api/rounds/${roundId}/villages`, { villageIds: [assignedVillageId, otherVillageId] })
  await put(`/api/rounds/${roundId}/assignments`, { assignments: [{ userId: enumeratorId, villageId: assignedVillageId }] })
  const opened = await coordinator.request('PATCH', `/api/rounds/${roundId}`, { status: 'open' })
  if (opened.status !== 200) throw new Error(`open: ${opened.status} ${JSON.stringify(opened.body)}`)
  const detail = await coordinator.get<{ questionnaire: { id: number } }>(`/api/rounds/${roundId}`)
  return { roundId, versionId: detail.body.questionnaire.id, assignedVillageId, otherVillageId, centre }
}

export function makeVisit(round: TestRound, overrides: Record<string, unknown> = {}, answers: Record<string, unknown> = {}) {
  const started = new Date(Date.now() - 20 * 60_000)
  return {
    id: randomUUID(),
    roundId: round.roundId,
    villageId: round.assignedVillageId,
    questionnaireVersionId: round.versionId,
    baseVersion: 0,
    farmCode: `F-${randomUUID().slice(0, 8)}`,
    location: { kind: 'gps', lat: round.centre.lat + 0.001, lon: round.centre.lon, accuracyM: 6 },
    answers: { adopted: true, farm_size_ha: 2.5, household_size: 6, ...answers },
    consent: true,
    consentAt: started.toISOString(),
    startedAt: started.toISOString(),
    savedAt: new Date(started.getTime() + 15 * 60_000).toISOString(),
    ...overrides
  }
}

export interface SyncBody {
  message?: string
  results: Array<{ id: string | null, status: string, version?: number, errors?: Record<string, string>, server?: Record<string, unknown> }>
  counts: Record<string, number>
}
