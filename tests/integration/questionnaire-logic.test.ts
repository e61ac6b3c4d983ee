import { spawnSync } from 'node:child_process'
import { mkdtempSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import { User, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { rectangular } from '../support/csv'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { type Client, demoUser, freshClient } from '../support/server'

// Conditions and several answers end to end through the real routes and MariaDB: a hidden question answered is
// refused for that record only, "not asked" is stored apart from the answers, the export has one 0/1 column per
// option, and the model builder gets one yes/no term per option (checked against R's glm on the exported file).

let coordinator: Client
let enumerator: Client
let round: TestRound

const EXTRA = [
  { key: 'credit_access', label: 'Access to credit?', type: 'yesno', required: true },
  {
    key: 'credit_source', label: 'Where does the credit come from?', type: 'choice', required: true,
    options: [{ value: 'bank', label: 'Bank' }, { value: 'savings_group', label: 'Savings group' }],
    askWhen: { join: 'all', tests: [{ question: 'credit_access', test: 'equals', value: true }] }
  },
  {
    key: 'heard_from', label: '+Heard of the seed from', type: 'several',
    // Labels a spreadsheet would run as a formula: the dictionary must neutralise them like every other cell.
    options: [{ value: 'radio', label: '=Radio+1' }, { value: 'neighbour', label: 'A neighbour' }, { value: 'field_day', label: 'A field day' }]
  }
]

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  enumerator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  await enumerator.signIn(demoUser('enumerator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id, EXTRA)
})
afterAll(closeTestDatabase)

const sync = (visits: unknown[]) => enumerator.post<SyncBody>('/api/sync/visits', { visits })

// A small seeded generator, so the visits (and the fit) are the same on every run.
function lcg(seed: number) {
  let s = seed >>> 0
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0
    return s / 2 ** 32
  }
}

describe('conditions on the server', () => {
  it('refuses only the record that answers a hidden question, and stores "not asked" apart from the answers', async () => {
    const hiddenAnswered = makeVisit(round, {}, { credit_access: false, credit_source: 'bank' })
    const withCredit = makeVisit(round, {}, { credit_access: true, credit_source: 'savings_group', heard_from: ['radio', 'field_day'] })
    const withoutCredit = makeVisit(round, {}, { credit_access: false, heard_from: ['neighbour'] })
    const shownButEmpty = makeVisit(round, {}, { credit_access: true })
    const badTicks = makeVisit(round, {}, { credit_access: false, heard_from: ['radio', 'radio'] })
    const answer = await sync([hiddenAnswered, withCredit, withoutCredit, shownButEmpty, badTicks])
    expect(answer.status).toBe(200)
    expect(answer.body.results.map(r => r.status)).toEqual(['rejected', 'stored', 'stored', 'rejected', 'rejected'])
    expect(answer.body.results[0]!.errors).toEqual({
      'answers.credit_source': 'Not asked at this farm (asked only when Access to credit? is Yes): leave it empty'
    })
    expect(answer.body.results[3]!.errors).toEqual({ 'answers.credit_source': 'This answer is required' })
    expect(answer.body.results[4]!.errors).toEqual({ 'answers.heard_from': 'An answer is ticked twice' })
    expect(await Visit.count({ where: { id: [hiddenAnswered.id, shownButEmpty.id, badTicks.id] } })).toBe(0)
    const stored = await Visit.findByPk(withoutCredit.id)
    expect(stored!.answers).toEqual({ adopted: true, farm_size_ha: 2.5, household_size: 6, credit_access: false, heard_from: ['neighbour'] })
    expect(stored!.notAsked).toEqual(['credit_source'])
    expect((await Visit.findByPk(withCredit.id))!.notAsked).toBeNull()
  })

  it('keeps "not asked" true to the corrected answers when review corrects a visit', async () => {
    const visit = makeVisit(round, {}, { credit_access: true, credit_source: 'bank' })
    expect((await sync([visit])).body.counts.stored).toBe(1)
    // Correcting credit to "no" while its source still holds an answer is refused with the same field error…
    const refused = await coordinator.post<{ data: { fieldErrors: Record<string, string> } }>(`/api/review/visits/${visit.id}`, { action: 'correct', reason: 'The farmer has no loan', answers: { credit_access: false } })
    expect(refused.status).toBe(400)
    expect(refused.body.data.fieldErrors.credit_source).toMatch(/^Not asked at this farm/)
    // …and taken with the source cleared; the visit then records the source as not asked.
    const taken = await coordinator.post(`/api/review/visits/${visit.id}`, { action: 'correct', reason: 'The farmer has no loan', answers: { credit_access: false, credit_source: null } })
    expect(taken.status).toBe(200)
    const row = await Visit.findByPk(visit.id)
    expect(row!.notAsked).toEqual(['credit_source'])
    expect(row!.answers.credit_access).toBe(false)
  })
})

describe('several answers in the export and the model builder', () => {
  const N = 90
  let visits: Array<ReturnType<typeof makeVisit>>

  beforeAll(async () => {
    const u = lcg(20261202)
    visits = Array.from({ length: N }, () => {
      const ticks = ['radio', 'neighbour', 'field_day'].filter(() => u() < 0.45)
      const credit = u() < 0.4
      // Adoption goes with hearing from a neighbour or a field day (an invented relation, for the fit to find).
      const index = -0.4 + (ticks.includes('neighbour') ? 0.8 : 0) + (ticks.includes('field_day') ? 0.6 : 0) + 1.2 * (u() - 0.5)
      return makeVisit(round, { farmCode: `SEV-${Math.floor(u() * 1e9).toString(36)}` }, {
        adopted: index > 0, farm_size_ha: Math.round((0.5 + u() * 8) * 10) / 10, household_size: 3 + Math.floor(u() * 7), credit_access: credit,
        ...(credit ? { credit_source: u() < 0.5 ? 'bank' : 'savings_group' } : {}),
        ...(ticks.length ? { heard_from: ticks } : {})
      })
    })
    const answer = await sync(visits)
    expect(answer.body.counts.stored).toBe(N)
    const waiting = await coordinator.get<{ total: number }>(`/api/review/visits?roundId=${round.roundId}&state=received&flagged=0&pageSize=5`)
    const accepted = await coordinator.post('/api/review/accept-unflagged', { roundId: round.roundId, count: waiting.body.total })
    expect(accepted.status).toBe(200)
  })

  it('exports one 0/1 column per option and an asked column, every cell neutralised', async () => {
    const exported = await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)
    expect(exported.status).toBe(200)
    const rows = rectangular(exported.body)
    const header = rows[0]!
    expect(header.slice(-7)).toEqual(['group_member', 'credit_access', 'credit_source', 'credit_source.asked', 'heard_from.radio', 'heard_from.neighbour', 'heard_from.field_day'])
    const col = (name: string) => header.indexOf(name)
    const byId = new Map(rows.slice(1).map(r => [r[col('visit_id')]!, r]))
    for (const v of visits) {
      const row = byId.get(v.id)
      if (!row) continue // flagged visits wait in review and are not exported
      const ticks = (v.answers.heard_from ?? null) as string[] | null
      for (const option of ['radio', 'neighbour', 'field_day']) {
        expect(row[col(`heard_from.${option}`)]).toBe(ticks ? (ticks.includes(option) ? '1' : '0') : '')
      }
      expect(row[col('credit_source.asked')]).toBe(v.answers.credit_access ? '1' : '0')
      expect(row[col('credit_source')]).toBe(v.answers.credit_access ? v.answers.credit_source : '')
    }
    const dictionary = rectangular((await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=dictionary`)).body)
    const radio = dictionary.find(r => r[0] === 'heard_from.radio')!
    expect(radio[1]).toBe('\'+Heard of the seed from: =Radio+1 (1 ticked, 0 not ticked; empty when not answered or not asked)')
    expect(dictionary.find(r => r[0] === 'credit_source.asked')![1]).toBe('Whether "Where does the credit come from?" was asked at this farm (1) or not asked (0): asked only when Access to credit? is Yes')
  })

  it('fits one yes/no term per option, with the same estimates as R\'s glm on the exported 0/1 columns', async () => {
    const covariates = [{ key: 'heard_from.radio' }, { key: 'heard_from.neighbour' }, { key: 'heard_from.field_day' }]
    const started = await coordinator.post<ModelRunSummary>('/api/models', { roundId: round.roundId, covariates, se: 'conventional' })
    expect(started.status).toBe(202)
    let run: ModelRunDetail | undefined
    for (let i = 0; i < 120 && (!run || run.status === 'running'); i++) {
      await new Promise(resolve => setTimeout(resolve, 250))
      run = (await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}`)).body
    }
    expect(run!.status).toBe('done')
    const terms = run!.results!.coefficients.map(c => c.term)
    expect(terms).toHaveLength(4)
    expect(run!.results!.coefficients.slice(1).map(c => c.label)).toEqual(['+Heard of the seed from: =Radio+1: yes vs no', '+Heard of the seed from: A neighbour: yes vs no', '+Heard of the seed from: A field day: yes vs no'])

    // Outside reference: R's glm (probit link) on the exported file, farms with no ticks left out as missing.
    const dir = mkdtempSync(path.join(tmpdir(), 'furrowcast-several-'))
    writeFileSync(path.join(dir, 'visits.csv'), (await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)).body)
    const script = `d <- read.csv("${path.join(dir, 'visits.csv')}", stringsAsFactors = FALSE)
      d$y <- as.numeric(d$adopted == "yes")
      f <- glm(y ~ heard_from.radio + heard_from.neighbour + heard_from.field_day, family = binomial(link = "probit"), data = d)
      cat(sprintf("%.10f", coef(f)), nobs(f), sep = "\\n")`
    const r = spawnSync('Rscript', ['-e', script], { encoding: 'utf8' })
    expect(r.status, r.stderr).toBe(0)
    const values = r.stdout.trim().split('\n').map(Number)
    expect(run!.results!.rows.used).toBe(values[4])
    run!.results!.coefficients.forEach((c, i) => expect(c.estimate).toBeCloseTo(values[i]!, 5))
  })

  it('says how many farms each treatment of "not asked" keeps, and fits with the one chosen', async () => {
    const info = await coordinator.get<{ asking: Record<string, { answered: number, notAsked: number, condition: string }> }>(`/api/models/questions?roundId=${round.roundId}`)
    const accepted = await Visit.findAll({ where: { roundId: round.roundId, reviewState: 'accepted' } })
    const withSource = accepted.filter(v => typeof v.answers.credit_source === 'string').length
    const notAsked = accepted.filter(v => v.notAsked?.includes('credit_source')).length
    expect(notAsked).toBeGreaterThan(10)
    expect(info.body.asking.credit_source).toEqual({ condition: 'Access to credit? is Yes', answered: withSource, notAsked })

    const preview = (notAskedChoice?: string) => coordinator.post<{ rows: { used: number }, message?: string }>('/api/models/preview', {
      roundId: round.roundId, covariates: [{ key: 'farm_size_ha' }, { key: 'credit_source', ...(notAskedChoice ? { notAsked: notAskedChoice } : {}) }]
    })
    const unsaid = await preview()
    expect(unsaid.status).toBe(400)
    expect(unsaid.body.message).toContain('Where does the credit come from? is asked only when Access to credit? is Yes: choose whether farms not asked count as 0 or are left out')
    expect((await preview('asked-only')).body.rows.used).toBe(withSource)
    expect((await preview('zero')).body.rows.used).toBe(withSource + notAsked)
  })
})

describe('checks across answers on the server', () => {
  it('refuses, for that record only, a visit breaking a check, with the coordinator\'s message', async () => {
    const detail = await coordinator.get<{ questionnaire: { definition: { questions: unknown[] } } }>(`/api/rounds/${round.roundId}`)
    const message = 'A household of this size cannot farm more than 40 ha here: check both answers.'
    const saved = await coordinator.request<{ id: number }>('PUT', `/api/rounds/${round.roundId}/questionnaire`, {
      questions: detail.body.questionnaire.definition.questions,
      checks: [{ question: 'farm_size_ha', test: 'at_most', against: { value: 40 }, message }]
    })
    expect(saved.status).toBe(200)
    const v2 = { ...round, versionId: saved.body.id }
    const breaks = makeVisit(v2, {}, { credit_access: false, farm_size_ha: 45 })
    const keeps = makeVisit(v2, {}, { credit_access: false, farm_size_ha: 39.5 })
    const answer = await sync([breaks, keeps])
    expect(answer.body.results.map(r => r.status)).toEqual(['rejected', 'stored'])
    expect(answer.body.results[0]!.errors).toEqual({ 'answers.farm_size_ha': message })
    expect(await Visit.count({ where: { id: breaks.id } })).toBe(0)
    // A check that names an unknown question is refused on save with a clear message.
    const bad = await coordinator.request<{ message: string }>('PUT', `/api/rounds/${round.roundId}/questionnaire`, {
      questions: detail.body.questionnaire.definition.questions,
      checks: [{ question: 'farm_size_ha', test: 'at_most', against: { question: 'plot_size' }, message: 'Plot within farm' }]
    })
    expect(bad.status).toBe(400)
    expect(bad.body.message).toContain('The check compares with "plot_size", which is not a question of this questionnaire')
  })
})
