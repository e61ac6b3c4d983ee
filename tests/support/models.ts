import { expect } from 'vitest'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import type { Client } from './server'

/** Starts a fit through the API and polls until the worker has finished it. */
export async function fitAndWait(coordinator: Client, body: unknown): Promise<ModelRunDetail> {
  const started = await coordinator.post<ModelRunSummary>('/api/models', body)
  expect(started.status).toBe(202)
  for (let i = 0; i < 240; i++) {
    const run = await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}`)
    if (run.body.status !== 'running') return run.body
    await new Promise(resolve => setTimeout(resolve, 250))
  }
  throw new Error('the fit did not finish in 60 s')
}

/** The round's published fit; fits and publishes one when nothing is published (test files may run alone). */
export async function ensurePublished(coordinator: Client, roundId: number): Promise<number> {
  const history = await coordinator.get<Array<{ modelRunId: number, active: boolean }>>(`/api/publications?roundId=${roundId}`)
  const active = history.body.find(p => p.active)
  if (active) return active.modelRunId
  const run = await fitAndWait(coordinator, { roundId, covariates: [{ key: 'dealer_distance_km' }, { key: 'extension_contact' }, { key: 'farm_size_ha' }] })
  expect((await coordinator.post(`/api/models/${run.id}/publish`, { note: 'Published by a browser test', targetRate: 0.3 })).status).toBe(200)
  return run.id
}
