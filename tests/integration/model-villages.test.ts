import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import type { PublishPreview } from '../../shared/types/overview'
import type { ScenarioResult } from '../../shared/utils/stats'
import { rectangular } from '../support/csv'
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

async function fitAndWait(body: unknown): Promise<ModelRunDetail> {
  const started = await coordinator.post<ModelRunSummary>('/api/models', body)
  expect(started.status, JSON.stringify(started.body)).toBe(202)
  let run: ModelRunDetail | null = null
  for (let i = 0; i < 240 && (!run || run.status === 'running'); i++) {
    if (run) await new Promise(resolve => setTimeout(resolve, 250))
    run = (await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}`)).body
  }
  expect(run!.status, JSON.stringify(run!.error)).toBe('done')
  return run!
}

async function csvOf(id: number, table: string): Promise<string[][]> {
  const answer = await coordinator.request('GET', `/api/models/${id}/export?format=csv&table=${table}`)
  expect(answer.status).toBe(200)
  return rectangular(String(answer.body))
}

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

  it('a weighted sampling plan with both checks: the design-adjusted test replaces Hosmer–Lemeshow, and all of it is exported', async () => {
    const run = await fitAndWait({
      roundId, covariates, villages: 'survey', weights: 'household_size',
      checks: { linkTest: true, hetero: ['dealer_distance_km'] }
    })
    const r = run.results!
    expect(r.hosmerLemeshow).toBeNull()
    expect(r.designGof!.groups).toHaveLength(10)
    expect(r.designGof!.designDf).toBe(23)
    expect(r.designGof!.denDf).toBe(15)
    expect(r.checks!.linkTest!.reading).toMatch(/squared index/)
    expect(r.checks!.hetero!.reading).toMatch(/Distance to the nearest input dealer/)
    expect(r.warnings.map(w => w.code)).toContain('few_psus')
    const fit = await csvOf(run.id, 'fit')
    const measure = (name: string) => fit.find(row => row[0] === name)
    expect(Number(measure('weighted_predicted_against_observed_p')![1])).toBeCloseTo(r.designGof!.p!, 10)
    expect(measure('weighted_predicted_against_observed_p')![2]).toBe(r.designGof!.reading)
    expect(Number(measure('link_test_p')![1])).toBeCloseTo(r.checks!.linkTest!.indexSquared.p!, 10)
    expect(Number(measure('uneven_spread_p')![1])).toBeCloseTo(r.checks!.hetero!.lrTest.p, 10)
    expect(Number(measure('design_degrees_of_freedom')![1])).toBe(23)
    expect(measure('warning_few_psus')![2]).toMatch(/^Few sampled villages: only 24 sampled villages/)
  })

  it('refuses the spread test with another link or a characteristic outside the model', async () => {
    const logit = await coordinator.post('/api/models', { roundId, covariates, link: 'logit', checks: { hetero: ['dealer_distance_km'] } })
    expect(logit.status).toBe(400)
    expect(JSON.stringify(logit.body)).toContain('probit only')
    const outside = await coordinator.post('/api/models', { roundId, covariates, checks: { hetero: ['farm_size_ha'] } })
    expect(outside.status).toBe(400)
    expect(JSON.stringify(outside.body)).toContain('in the model')
  })

  it('scenarios of the village random intercept: from each village\'s predicted level, exported and offered to funders', async () => {
    const run = await fitAndWait({ roundId, covariates, villages: 'random-intercept' })
    const answer = await coordinator.post<ScenarioResult[]>(`/api/models/${run.id}/scenarios`, {
      scenarios: [{ name: 'extension for all', covariate: 'extension_contact', set: true }]
    })
    expect(answer.status).toBe(200)
    const sc = answer.body[0]!
    expect(sc.overall.estimate).toBeGreaterThan(0)
    expect(sc.overall.baseline).toBeCloseTo(run.results!.overall.estimate, 12)
    expect(sc.villages).toHaveLength(24)
    for (const v of sc.villages) expect(v.baseline).toBeCloseTo(run.results!.villages!.find(x => x.village === v.village)!.estimate, 12)
    const table = await csvOf(run.id, 'scenarios')
    expect(table[0]!.slice(0, 3)).toEqual(['scenario', 'what_changes', 'village_code'])
    expect(table).toHaveLength(1 + 25)
    expect(table[1]![10]).toBe('averaged over how villages differ')
    expect(table[2]![10]).toBe('from the village\'s own predicted level')
    const preview = await coordinator.post<PublishPreview>(`/api/models/${run.id}/publish-preview`, { scenarioNames: ['extension for all'] })
    expect(preview.status).toBe(200)
    expect(preview.body.scenarios).toEqual(['extension for all'])
    const shown = preview.body.villages.filter(v => !v.suppressed)
    expect(shown.length).toBeGreaterThan(0)
    for (const v of shown) expect(v.scenarios['extension for all']).toBeCloseTo(sc.villages.find(x => x.village === v.code)!.scenario, 12)
  })
})
