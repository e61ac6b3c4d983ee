import { readFileSync, readdirSync } from 'node:fs'
import { strFromU8, unzipSync } from 'fflate'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, ModelRun, Organisation, Publication, Round, Visit, Village } from '../../server/db/models'
import { runModel } from '../../shared/utils/stats'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import type { PublishPreview } from '../../shared/types/overview'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type Client, baseUrl, demoUser, freshClient } from '../support/server'
import { rectangular } from '../support/csv'

// The demo round: 1,500 accepted visits in 24 villages generated from a known probit (server/db/demo/README.md).
let coordinator: Client
let funder: Client
let roundId: number
let accepted: number
const covariates = [{ key: 'dealer_distance_km' }, { key: 'extension_contact' }, { key: 'farm_size_ha', transform: 'log' }, { key: 'female_head' }]

async function fitAndWait(body: unknown): Promise<ModelRunDetail> {
  const started = await coordinator.post<ModelRunSummary>('/api/models', body)
  expect(started.status).toBe(202)
  for (let i = 0; i < 120; i++) {
    const run = await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}`)
    if (run.body.status !== 'running') return run.body
    await new Promise(resolve => setTimeout(resolve, 250))
  }
  throw new Error('the fit did not finish in 30 s')
}

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  funder = freshClient()
  await funder.signIn(demoUser('funder').email)
  // The seeded round is the first one; other test files add rounds (and visits) of their own.
  const rounds = await coordinator.get<Array<{ id: number }>>('/api/rounds')
  roundId = Math.min(...rounds.body.map(r => r.id))
  accepted = await Visit.count({ where: { roundId, reviewState: 'accepted' } })
})
afterAll(closeTestDatabase)

describe('fitting a model of the demo round', () => {
  let run: ModelRunDetail

  it('previews the equation and the visits used before fitting', async () => {
    const preview = await coordinator.post<{ equation: string, rows: { used: number, totalRows: number } }>('/api/models/preview', { roundId, covariates })
    expect(preview.status).toBe(200)
    expect(preview.body.equation).toMatch(/^P\(adopt = 1\) = Φ\(β₀ \+ β₁·/)
    expect(accepted).toBeGreaterThanOrEqual(1500)
    expect(preview.body.rows.totalRows).toBe(accepted)
  })

  it('fits in the background and stores the run with spec, row hash and engine version', async () => {
    run = await fitAndWait({ roundId, covariates })
    expect(run.status).toBe('done')
    expect(run.results!.converged).toBe(true)
    expect(run.results!.covariance.type).toBe('cluster')
    expect(run.results!.covariance.clusters).toBe(24)
    expect(run.rowsHash).toMatch(/^[0-9a-f]{64}$/)
    expect(run.engineVersion).toBe(run.results!.engineVersion)
    // The demo data were generated with these signs (server/db/demo/README.md).
    const coef = Object.fromEntries(run.results!.coefficients.map(c => [c.term, c.estimate]))
    expect(Object.values(coef).length).toBe(5)
    expect(coef.dealer_distance_km).toBeLessThan(0)
    expect(coef.extension_contact).toBeGreaterThan(0)
    expect(coef.female_head).toBeLessThan(0)
    expect(run.results!.margins!.effects.length).toBe(4)
    expect(run.results!.otherMargins!.kind).toBe('mem')
  })

  it('used exactly the accepted visits: the engine run in-process on rows read from MariaDB gives the same numbers', async () => {
    const visits = await Visit.findAll({ where: { roundId, reviewState: 'accepted' }, order: [['id', 'ASC']] })
    const villages = await Village.findAll()
    const code = new Map(villages.map(v => [v.id, v.code]))
    const rows = visits.map(v => ({ ...v.answers, adopted: v.adopted, village: code.get(v.villageId) }))
    const local = runModel(rows, run.spec)
    expect(local.coefficients.map(c => c.estimate)).toEqual(run.results!.coefficients.map(c => c.estimate))
    expect(local.coefficients.map(c => c.se)).toEqual(run.results!.coefficients.map(c => c.se))
  })

  it('answers a GET that asks to wait once the fit has ended, in one request, and refuses a wait out of bounds', async () => {
    const started = await coordinator.post<ModelRunSummary>('/api/models', { roundId, covariates })
    expect(started.status).toBe(202)
    const t0 = Date.now()
    const waited = await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}?wait=20000`)
    expect(waited.status).toBe(200)
    expect(waited.body.status).toBe('done')
    expect(waited.body.results!.coefficients.map(c => c.estimate)).toEqual(run.results!.coefficients.map(c => c.estimate))
    expect(Date.now() - t0).toBeLessThan(15_000)
    // A finished run is answered at once.
    const t1 = Date.now()
    expect((await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}?wait=20000`)).body.status).toBe('done')
    expect(Date.now() - t1).toBeLessThan(1000)
    for (const wait of ['20001', '-1', 'soon', '1e9']) expect((await coordinator.get(`/api/models/${started.body.id}?wait=${wait}`)).status).toBe(400)
  })

  it('sees the end of a fit stored by another app server while it waits (the row read again every second)', async () => {
    // A run this server is not fitting: the row alone says running, then done, as another server of a cluster writes it.
    const row = await ModelRun.create({ ...(await ModelRun.findByPk(run.id))!.get({ plain: true }), id: undefined, status: 'running', createdAt: new Date(), finishedAt: null } as never)
    const t0 = Date.now()
    const waiting = coordinator.get<ModelRunDetail>(`/api/models/${row.id}?wait=10000`)
    await new Promise(resolve => setTimeout(resolve, 600))
    await row.update({ status: 'done', finishedAt: new Date() })
    const answer = await waiting
    expect(answer.body.status).toBe('done')
    const took = Date.now() - t0
    expect(took).toBeGreaterThanOrEqual(600)
    expect(took).toBeLessThan(4000)
    // Still running at the end of the wait: answered as it stands.
    await row.update({ status: 'running', finishedAt: null })
    const t1 = Date.now()
    expect((await coordinator.get<ModelRunDetail>(`/api/models/${row.id}?wait=1500`)).body.status).toBe('running')
    expect(Date.now() - t1).toBeGreaterThanOrEqual(1400)
    await row.destroy()
  })

  it('re-running the stored specification on the same rows gives the same numbers', async () => {
    const again = await coordinator.post<ModelRunSummary>(`/api/models/${run.id}/rerun`)
    expect(again.status).toBe(202)
    let second: ModelRunDetail | undefined
    for (let i = 0; i < 120 && second?.status !== 'done'; i++) {
      second = (await coordinator.get<ModelRunDetail>(`/api/models/${again.body.id}`)).body
      if (second.status === 'running') await new Promise(resolve => setTimeout(resolve, 250))
    }
    expect(second!.rowsHash).toBe(run.rowsHash)
    const strip = (r: ModelRunDetail) => ({ ...r.results!, timings: null })
    expect(strip(second!)).toEqual(strip(run))
  })

  it('compares nested fits with a likelihood-ratio test, and probit with logit on the same rows', async () => {
    const small = await fitAndWait({ roundId, covariates: covariates.slice(0, 2) })
    const logit = await fitAndWait({ roundId, covariates, link: 'logit' })
    const compared = await coordinator.get<{ tests: Array<{ restricted: number, full: number, chi2: number, df: number, p: number }>, runs: Array<{ id: number, sameRowsAs: number[] }>, notComparable: string[] }>(
      `/api/models/compare?ids=${run.id},${small.id},${logit.id}`)
    expect(compared.status).toBe(200)
    const test = compared.body.tests.find(t => t.restricted === small.id && t.full === run.id)!
    expect(test.df).toBe(2)
    expect(test.chi2).toBeCloseTo(2 * (run.results!.fit.loglik - small.results!.fit.loglik), 10)
    expect(compared.body.runs.find(r => r.id === logit.id)!.sameRowsAs).toContain(run.id)
    expect(compared.body.notComparable.join(' ')).toMatch(/different links/)
  })

  it('simulates a scenario: extension contact for every farm raises predicted adoption, by village too', async () => {
    const answer = await coordinator.post<Array<{ overall: { estimate: number, se: number }, villages: unknown[] }>>(`/api/models/${run.id}/scenarios`, {
      scenarios: [{ name: 'extension for all', covariate: 'extension_contact', set: true }]
    })
    expect(answer.status).toBe(200)
    expect(answer.body[0]!.overall.estimate).toBeGreaterThan(0)
    expect(answer.body[0]!.overall.se).toBeGreaterThan(0)
    expect(answer.body[0]!.villages).toHaveLength(24)
  })

  it('exports each table as one rectangular CSV, all of them in a zip with a read-me of the cautions, and JSON', async () => {
    const tables: Record<string, string[][]> = {}
    for (const table of ['effects', 'coefficients', 'villages', 'fit']) {
      const csv = await coordinator.request('GET', `/api/models/${run.id}/export?format=csv&table=${table}`)
      expect(csv.status).toBe(200)
      expect(csv.headers.get('content-type')).toMatch(/text\/csv/)
      tables[table] = rectangular(String(csv.body))
    }
    // Effects in the units of the screen: percentage points, the unit named in the header.
    expect(tables.effects![0]).toEqual(['characteristic', 'change_measured', 'measured_over', 'change_points', 'range_low_points', 'range_high_points', 'standard_error_points', 'p_value', 'how_sure'])
    const distance = tables.effects!.find(r => r[0]!.startsWith('Distance to the nearest input dealer'))!
    expect(distance[1]).toBe('per additional km')
    const effect = run.results!.margins!.effects.find(e => e.covariate === 'dealer_distance_km')!
    expect(Number(distance[3])).toBeCloseTo(effect.estimate * 100, 3)
    expect(tables.coefficients![0]!.slice(0, 3)).toEqual(['term', 'characteristic', 'coefficient'])
    expect(tables.coefficients!.find(r => r[1] === 'intercept')).toBeTruthy()
    expect(tables.villages).toHaveLength(25)
    expect(tables.fit!.map(r => r[0])).toContain('area_under_curve')

    const zip = await fetch(`${baseUrl()}/api/models/${run.id}/export?format=zip`, { headers: { 'cookie': coordinator.cookieHeader(), 'x-forwarded-for': '10.9.9.9' } })
    expect(zip.headers.get('content-type')).toBe('application/zip')
    const files = unzipSync(new Uint8Array(await zip.arrayBuffer()))
    expect(Object.keys(files).sort()).toEqual(['README.txt', 'coefficients.csv', 'effects.csv', 'fit.csv', 'scenarios.csv', 'villages.csv'])
    expect(strFromU8(files['README.txt']!)).toMatch(/not causal effects/)
    expect(strFromU8(files['effects.csv']!).split('\n')[0]).toMatch(/^characteristic,/)
    const json = await coordinator.get<{ cautions: string[], results: unknown }>(`/api/models/${run.id}/export?format=json`)
    expect(json.body.cautions.length).toBe(3)
  })

  it.each([
    ['an unknown question', (id: number) => ({ roundId: id, covariates: [{ key: 'no_such_question' }] }), 400],
    ['a log of a yes/no answer', (id: number) => ({ roundId: id, covariates: [{ key: 'extension_contact', transform: 'log' }] }), 400],
    ['no covariates', (id: number) => ({ roundId: id, covariates: [] }), 400],
    ['a round id that is not a number', () => ({ roundId: 'x', covariates: [{ key: 'farm_size_ha' }] }), 400],
    ['a round that does not exist', () => ({ roundId: 99999, covariates: [{ key: 'farm_size_ha' }] }), 404]
  ])('refuses %s with a clear message and stores nothing', async (_label, body, status) => {
    const before = await ModelRun.count()
    const answer = await coordinator.post('/api/models', body(roundId))
    expect(answer.status).toBe(status)
    expect(typeof answer.body.message).toBe('string')
    expect(await ModelRun.count()).toBe(before)
  })

  describe('publishing', () => {
    it('publishes, tells funders by e-mail, and funders see village aggregates only', async () => {
      const published = await coordinator.post(`/api/models/${run.id}/publish`, { note: 'First round results', targetRate: 0.3 })
      expect(published.status).toBe(200)
      const overview = await funder.get<Array<{ roundId: number, farmsVisited: number, predicted: { estimate: number } }>>('/api/overview')
      expect(overview.status).toBe(200)
      expect(overview.body.map(r => r.roundId)).toContain(roundId)
      const map = await funder.get<{ villages: Array<Record<string, unknown>> }>(`/api/overview/${roundId}`)
      expect(map.body.villages).toHaveLength(24)
      const allowed = ['code', 'name', 'lat', 'lon', 'boundary', 'visits', 'suppressed', 'belowVisitTarget', 'observedRate', 'predicted', 'scenarios']
      for (const v of map.body.villages) expect(Object.keys(v).every(k => allowed.includes(k))).toBe(true)
      expect(JSON.stringify(map.body)).not.toMatch(/farmCode|answers|enumerator|photo|accuracy/i)
      const outbox = process.env.OUTBOX_DIR!
      let found = false
      for (let i = 0; i < 40 && !found; i++) {
        found = readdirSync(outbox).filter(f => f.endsWith('.eml')).some(f => readFileSync(path.join(outbox, f), 'utf8').includes(demoUser('funder').email) && /New results from/.test(readFileSync(path.join(outbox, f), 'utf8')))
        if (!found) await new Promise(resolve => setTimeout(resolve, 250))
      }
      expect(found).toBe(true)
    })

    it('hides villages with fewer visits than the organisation\'s minimum', async () => {
      const organisation = await Organisation.findOne()
      const settings = organisation!.settings
      await organisation!.update({ settings: { ...settings, minVisitsForFunders: 100_000 } })
      try {
        const map = await funder.get<{ villages: Array<{ suppressed: boolean, visits: number | null, predicted: unknown }> }>(`/api/overview/${roundId}`)
        expect(map.body.villages.every(v => v.suppressed && v.visits === null && v.predicted === null)).toBe(true)
      }
      finally {
        await organisation!.update({ settings })
      }
    })

    it('shares results only with funders whose organisation the admins listed, and shows the change from an earlier round', async () => {
      const organisation = await Organisation.findOne({ where: { id: (await Round.findByPk(roundId))!.organisationId } })
      const settings = organisation!.settings
      await organisation!.update({ settings: { ...settings, funderOrganisations: [] } })
      try {
        const refused = await funder.get('/api/overview')
        expect(refused.status).toBe(403)
        expect(refused.body.message).toMatch(/not on this programme's list of funders/)
        expect((await funder.get(`/api/overview/${roundId}`)).status).toBe(403)
        // A coordinator of the programme still sees the map.
        expect((await coordinator.get(`/api/overview/${roundId}`)).status).toBe(200)
      }
      finally {
        await organisation!.update({ settings })
      }
      // An earlier round of the same technology, published with other figures: the map reports it as the previous one.
      const current = await Publication.findOne({ where: { roundId, active: true } })
      const round = await Round.findByPk(roundId)
      const earlier = await Round.create({ organisationId: round!.organisationId, name: 'Sorghum seed adoption, long rains (earlier)', technology: round!.technology, season: 'earlier', status: 'closed', currentVersionId: null })
      const content = { ...current!.content, overall: { ...current!.content.overall, estimate: 0.21 } }
      await Publication.create({ organisationId: round!.organisationId, roundId: earlier.id, modelRunId: current!.modelRunId, note: 'earlier', content, publishedBy: current!.publishedBy, withdrawnAt: null })
      const map = await funder.get<{ previous: { round: string, predicted: number } | null }>(`/api/overview/${roundId}`)
      expect(map.body.previous).toEqual({ round: 'Sorghum seed adoption, long rains (earlier)', predicted: 0.21 })
    })

    it('previews what funders will see without writing, then publishes only the chosen scenarios and the visit target', async () => {
      // An exploratory scenario beside the one the coordinator means to publish.
      expect((await coordinator.post(`/api/models/${run.id}/scenarios`, { scenarios: [{ name: 'exploring: no extension', covariate: 'extension_contact', set: false }] })).status).toBe(200)
      const publications = await Publication.count()
      const preview = await coordinator.post<PublishPreview>(`/api/models/${run.id}/publish-preview`, { scenarioNames: ['extension for all'], targetVisitsPerVillage: 64, targetRate: 0.3 })
      expect(preview.status).toBe(200)
      expect(await Publication.count()).toBe(publications)
      expect(preview.body.scenarios).toEqual(['extension for all'])
      expect(JSON.stringify(preview.body)).not.toContain('exploring: no extension')
      const fewer = run.results!.villages!.filter(v => v.n < 64).map(v => v.village).sort()
      expect(fewer.length).toBeGreaterThan(0)
      expect(preview.body.villages.filter(v => v.belowVisitTarget).map(v => v.code).sort()).toEqual(fewer)
      expect(preview.body.headline.villagesBelowVisitTarget).toBe(fewer.length)
      expect(preview.body.villages.every(v => Object.keys(v.scenarios).join() === 'extension for all')).toBe(true)

      const unknown = await coordinator.post(`/api/models/${run.id}/publish-preview`, { scenarioNames: ['no such scenario'] })
      expect(unknown.status).toBe(400)
      expect(unknown.body.message).toMatch(/no scenario named “no such scenario”/)
      expect((await coordinator.post(`/api/models/${run.id}/publish-preview`, { targetVisitsPerVillage: 0 })).status).toBe(400)

      expect((await coordinator.post(`/api/models/${run.id}/publish`, { note: 'With one scenario', scenarioNames: ['extension for all'], targetVisitsPerVillage: 64 })).status).toBe(200)
      const map = await funder.get<{ scenarios: string[], villages: Array<{ code: string, belowVisitTarget: boolean }> }>(`/api/overview/${roundId}`)
      expect(map.body.scenarios).toEqual(['extension for all'])
      expect(JSON.stringify(map.body)).not.toContain('exploring: no extension')
      expect(map.body.villages.filter(v => v.belowVisitTarget).map(v => v.code).sort()).toEqual(fewer)
      expect((await Round.findByPk(roundId))!.targetVisitsPerVillage).toBe(64)
    })

    it('shows suppressed villages in the preview as funders will see them', async () => {
      const organisation = await Organisation.findOne({ where: { id: (await Round.findByPk(roundId))!.organisationId } })
      const settings = organisation!.settings
      await organisation!.update({ settings: { ...settings, minVisitsForFunders: 100_000 } })
      try {
        const preview = await coordinator.post<PublishPreview>(`/api/models/${run.id}/publish-preview`, {})
        expect(preview.status).toBe(200)
        expect(preview.body.minVisits).toBe(100_000)
        expect(preview.body.headline.suppressedVillages).toBe(24)
        expect(preview.body.villages.every(v => v.suppressed && v.visits === null && v.predicted === null && v.observedRate === null)).toBe(true)
      }
      finally {
        await organisation!.update({ settings })
      }
    })

    it('audits replacing and withdrawing, after which funders see nothing of the round', async () => {
      expect((await coordinator.post(`/api/models/${run.id}/publish`, { note: 'Replaced with the same fit' })).status).toBe(200)
      expect(await AuditEntry.count({ where: { action: 'publication.replace' } })).toBeGreaterThan(0)
      expect((await coordinator.request('DELETE', `/api/publications/${roundId}`)).status).toBe(200)
      expect(await AuditEntry.count({ where: { action: 'publication.withdraw' } })).toBeGreaterThan(0)
      expect((await funder.get(`/api/overview/${roundId}`)).status).toBe(404)
      // Leave it published for the browser tests.
      expect((await coordinator.post(`/api/models/${run.id}/publish`, { note: 'Demo results', tabletAid: true })).status).toBe(200)
    })

    it('refuses to publish with a bad note, and answers 404 for another organisation\'s run', async () => {
      expect((await coordinator.post(`/api/models/${run.id}/publish`, { note: '' })).status).toBe(400)
      expect((await coordinator.post('/api/models/999999/publish', { note: 'nothing' })).status).toBe(404)
    })
  })
})

describe('round exports for coordinators', () => {
  it('exports the accepted visits with a column per question, and a data dictionary for those columns', async () => {
    const visits = await coordinator.request('GET', `/api/rounds/${roundId}/export?part=visits`)
    expect(visits.status).toBe(200)
    expect(visits.headers.get('content-type')).toMatch(/text\/csv/)
    const lines = String(visits.body).trim().split('\n')
    // One table, its header on row 1: no comment lines above it.
    rectangular(String(visits.body))
    const header = lines[0]!.split(',')
    expect(header[0]).toBe('visit_id')
    expect(header).toEqual(expect.arrayContaining(['village_code', 'farm_pseudonym', 'adopted', 'dealer_distance_km', 'extension_contact']))
    const dataRows = lines.slice(1)
    expect(dataRows).toHaveLength(await Visit.count({ where: { roundId, reviewState: 'accepted' } }))
    expect(dataRows.every(r => /,(yes|no),/.test(r))).toBe(true)

    const dictionary = await coordinator.request('GET', `/api/rounds/${roundId}/export?part=dictionary`)
    const columns = String(dictionary.body).trim().split('\n').slice(1).map(l => l.split(',')[0])
    for (const column of header) expect(columns).toContain(column)
    expect(String(dictionary.body)).toMatch(/^dealer_distance_km,.*,number,km,/m)

    const zip = await fetch(`${baseUrl()}/api/rounds/${roundId}/export?part=all`, { headers: { 'cookie': coordinator.cookieHeader(), 'x-forwarded-for': '10.9.9.9' } })
    const files = unzipSync(new Uint8Array(await zip.arrayBuffer()))
    // The demo questionnaire's plots come as a second table with its own dictionary.
    expect(Object.keys(files).sort()).toEqual(['README.txt', 'dictionary.csv', 'plots-dictionary.csv', 'plots.csv', 'visits.csv'])
    expect(strFromU8(files['README.txt']!)).toMatch(/protected under the local data-protection law/)
    expect(strFromU8(files['README.txt']!)).toMatch(/plots\.csv: one row per plots row of each visit, joined to visits\.csv by visit_id/)
    expect(strFromU8(files['visits.csv']!)).toBe(String(visits.body))
    expect(strFromU8(files['plots.csv']!)).toBe(String((await coordinator.request('GET', `/api/rounds/${roundId}/export?part=rows&group=plots`)).body))
  })

  it('refuses the exports to funders and enumerators, and answers 404 for an unknown round', async () => {
    expect((await funder.get(`/api/rounds/${roundId}/export`)).status).toBe(403)
    expect((await coordinator.get('/api/rounds/999999/export')).status).toBe(404)
    expect((await coordinator.get(`/api/rounds/${roundId}/export?part=everything`)).status).toBe(400)
  })
})
