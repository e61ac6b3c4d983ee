import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type Client, demoUser, freshClient } from '../support/server'

// The village treatment chosen in the builder, through the real routes, worker and MariaDB (demo round: 24 villages).
let coordinator: Client
let roundId: number
const covariates = [{ key: 'dealer_distance_km' }, { key: 'extension_contact' }]

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  const rounds = await coordinator.get<Array<{ id: number }>>('/api/rounds')
  roundId = Math.min(...rounds.body.map(r => r.id))
})
afterAll(closeTestDatabase)

describe('villages in the model', () => {
  it('the preview counts the villages so the builder can warn about too few', async () => {
    const preview = await coordinator.post<{ villages: number }>('/api/models/preview', { roundId, covariates, villages: 'random-intercept' })
    expect(preview.status).toBe(200)
    expect(preview.body.villages).toBe(24)
  })

  it('fits a village random intercept and stores σ, ρ, the LR test and one prediction per village', async () => {
    const started = await coordinator.post<ModelRunSummary>('/api/models', { roundId, covariates, villages: 'random-intercept' })
    expect(started.status).toBe(202)
    let run: ModelRunDetail | null = null
    for (let i = 0; i < 240 && (!run || run.status === 'running'); i++) {
      if (run) await new Promise(resolve => setTimeout(resolve, 250))
      run = (await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}`)).body
    }
    expect(run!.status, JSON.stringify(run!.error)).toBe('done')
    const r = run!.results!
    expect(r.villageTreatment).toBe('random-intercept')
    expect(r.randomIntercept!.sigma.estimate).toBeGreaterThan(0)
    expect(r.randomIntercept!.rho.estimate).toBeCloseTo(r.randomIntercept!.sigma.estimate ** 2 / (r.randomIntercept!.sigma.estimate ** 2 + 1), 12)
    expect(r.villages).toHaveLength(24)
    expect(r.randomIntercept!.villageEffects).toHaveLength(24)
  })

  it('refuses a sampling plan without weights and a village random intercept with another link, with the field named', async () => {
    const survey = await coordinator.post<{ data?: { fieldErrors?: Record<string, string> } }>('/api/models', { roundId, covariates, villages: 'survey' })
    expect(survey.status).toBe(400)
    expect(JSON.stringify(survey.body)).toContain('weights')
    const ri = await coordinator.post('/api/models', { roundId, covariates, villages: 'random-intercept', link: 'cloglog' })
    expect(ri.status).toBe(400)
    expect(JSON.stringify(ri.body)).toContain('probit or logit')
  })
})
