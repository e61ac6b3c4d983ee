import { randomUUID } from 'node:crypto'
import { spawnSync } from 'node:child_process'
import { mkdtempSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, User, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { rectangular } from '../support/csv'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { type Client, demoUser, freshClient } from '../support/server'

// Repeated groups (plots) end to end through the real routes and MariaDB: the builder's save, sync of a visit with
// its rows (a bad row refuses that record only), review corrections of a row (audited), a visit of the earlier
// version without plots still corrected, the plot table export, and plot-level and farm-level models checked against
// R's glm on the exported rows.

let coordinator: Client
let enumerator: Client
let round: TestRound
let firstVersionId: number

const PLOTS = {
  key: 'plots',
  label: 'Plots',
  minRows: 1,
  maxRows: 6,
  questions: [
    { key: 'plot_size_ha', label: 'Plot size', type: 'number', unit: 'ha', min: 0.01, max: 20, required: true },
    { key: 'plot_soil', label: 'Soil', type: 'choice', required: true, options: [{ value: 'sandy', label: 'Sandy' }, { value: 'loam', label: 'Loam' }, { value: 'clay', label: 'Clay' }] },
    { key: 'plot_sown', label: 'Seed sown on this plot?', type: 'yesno', required: true },
    { key: 'plot_note', label: 'Note on the plot', type: 'text' }
  ]
}
const TOP = [
  { key: 'farm_size_ha', label: 'Farm size', type: 'number', unit: 'ha', min: 0, max: 50, required: true },
  { key: 'household_size', label: 'Household size', type: 'whole', min: 1, max: 30, required: true },
  { key: 'group_member', label: 'Farmer group member?', type: 'yesno' }
]

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  enumerator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  await enumerator.signIn(demoUser('enumerator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id)
  firstVersionId = round.versionId
  // The round is open: saving the plots makes version 2, and version 1 (without plots) stays valid for its visits.
  const saved = await coordinator.request('PUT', `/api/rounds/${round.roundId}/questionnaire`, { questions: TOP, groups: [PLOTS] })
  expect(saved.status, JSON.stringify(saved.body)).toBe(200)
  round = { ...round, versionId: (saved.body as { id: number }).id }
})
afterAll(closeTestDatabase)

const sync = (visits: unknown[]) => enumerator.post<SyncBody>('/api/sync/visits', { visits })
const plot = (answers: Record<string, unknown>) => ({ row: randomUUID(), ...answers })

async function acceptAll(ids: string[]) {
  for (const id of ids) {
    const answer = await coordinator.post(`/api/review/visits/${id}`, { action: 'accept' })
    expect(answer.status).toBe(200)
  }
}

function lcg(seed: number) {
  let s = seed >>> 0
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0
    return s / 2 ** 32
  }
}

describe('the builder refuses a bad group on save', () => {
  it('refuses a repeat inside a repeat and a key used twice, with plain messages', async () => {
    const nested = await coordinator.request('PUT', `/api/rounds/${round.roundId}/questionnaire`, { questions: TOP, groups: [{ ...PLOTS, groups: [{ key: 'sub', label: 'Sub-plots', questions: [] }] }] })
    expect(nested.status).toBe(400)
    expect(JSON.stringify(nested.body)).toMatch(/A group cannot hold another group/)
    const twice = await coordinator.request('PUT', `/api/rounds/${round.roundId}/questionnaire`, { questions: TOP, groups: [{ ...PLOTS, questions: [...PLOTS.questions, { key: 'farm_size_ha', label: 'Size again', type: 'number' }] }] })
    expect(twice.status).toBe(400)
    expect(JSON.stringify(twice.body)).toMatch(/farm_size_ha is used twice/)
  })
})

describe('plots through sync, review and export', () => {
  let goodVisit: ReturnType<typeof makeVisit>
  let oldVisit: ReturnType<typeof makeVisit>

  beforeAll(async () => {
    goodVisit = makeVisit(round, {}, { plots: [plot({ plot_size_ha: 1.5, plot_soil: 'loam', plot_sown: true, plot_note: '=HYPERLINK("x")' }), plot({ plot_size_ha: 0.7, plot_soil: 'clay', plot_sown: false })] })
    oldVisit = makeVisit({ ...round, versionId: firstVersionId }, {}, { group_member: true })
  })

  it('stores a visit with two plots and refuses only the record whose row lacks a required answer', async () => {
    const badRow = makeVisit(round, {}, { plots: [plot({ plot_size_ha: 1, plot_soil: 'sandy', plot_sown: true }), plot({ plot_soil: 'sandy', plot_sown: false })] })
    const answer = await sync([goodVisit, badRow, oldVisit])
    expect(answer.status).toBe(200)
    expect(answer.body.results.map(r => r.status)).toEqual(['stored', 'rejected', 'stored'])
    expect(answer.body.results[1]!.errors).toEqual({ 'answers.plots.1.plot_size_ha': 'This answer is required' })
    const stored = await Visit.findByPk(goodVisit.id)
    expect((stored!.answers.plots as unknown[]).length).toBe(2)
    expect(await Visit.findByPk(badRow.id)).toBeNull()
    await acceptAll([goodVisit.id, oldVisit.id])
  })

  it('corrects one plot answer (audited with before and after) and refuses a correction that empties a required row answer', async () => {
    const stored = await Visit.findByPk(goodVisit.id)
    const rows = stored!.answers.plots as Array<Record<string, unknown>>
    const corrected = [{ ...rows[0]!, plot_size_ha: 1.25 }, rows[1]!]
    const ok = await coordinator.post(`/api/review/visits/${goodVisit.id}`, { action: 'correct', answers: { plots: corrected }, reason: 'Plot measured again with the farmer' })
    expect(ok.status, JSON.stringify(ok.body)).toBe(200)
    const after = await Visit.findByPk(goodVisit.id)
    expect((after!.answers.plots as Array<Record<string, unknown>>)[0]!.plot_size_ha).toBe(1.25)
    const entry = await AuditEntry.findOne({ where: { action: 'visit.correct', entityId: goodVisit.id } })
    expect(JSON.stringify(entry!.details)).toContain('1.25')
    expect(JSON.stringify(entry!.details)).toContain('1.5')

    const { plot_size_ha: _gone, ...withoutSize } = rows[1]!
    const refused = await coordinator.post<{ data?: { fieldErrors: Record<string, string> } }>(`/api/review/visits/${goodVisit.id}`, { action: 'correct', answers: { plots: [corrected[0], withoutSize] }, reason: 'Trying to drop the size' })
    expect(refused.status).toBe(400)
    expect(refused.body.data?.fieldErrors).toEqual({ 'plots.1.plot_size_ha': 'This answer is required' })
    expect(((await Visit.findByPk(goodVisit.id))!.answers.plots as unknown[]).length).toBe(2)
  })

  it('still corrects a visit of the earlier version, which has no plots', async () => {
    const ok = await coordinator.post(`/api/review/visits/${oldVisit.id}`, { action: 'correct', answers: { household_size: 7 }, reason: 'Counted again' })
    expect(ok.status, JSON.stringify(ok.body)).toBe(200)
    const plotsOnOld = await coordinator.post(`/api/review/visits/${oldVisit.id}`, { action: 'correct', answers: { plots: [] }, reason: 'Adding plots to an old visit' })
    expect(plotsOnOld.status).toBe(400)
  })

  it('exports the plots as a second table keyed by visit, pseudonymised like visits.csv and with formulas neutralised', async () => {
    const visits = rectangular((await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)).body)
    const plots = rectangular((await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=rows&group=plots`)).body)
    expect(plots[0]).toEqual(['visit_id', 'row_id', 'row_number', 'village_code', 'farm_pseudonym', 'questionnaire_version_id', 'plot_size_ha', 'plot_soil', 'plot_sown'])
    const mine = plots.filter(r => r[0] === goodVisit.id)
    expect(mine.map(r => [r[2], r[6], r[7], r[8]])).toEqual([['1', '1.25', 'loam', 'yes'], ['2', '0.7', 'clay', 'no']])
    const visitRow = visits.find(r => r[0] === goodVisit.id)!
    expect(mine[0]![4]).toBe(visitRow[visits[0]!.indexOf('farm_pseudonym')])
    expect(mine[0]![4]).toMatch(/^P-[0-9a-f]{12}$/)
    expect(plots.some(r => r[0] === oldVisit.id)).toBe(false)

    const identifying = rectangular((await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=rows&group=plots&identifying=1&reason=${encodeURIComponent('Checking plot notes with the field team')}`)).body)
    expect(identifying[0]).toContain('plot_note')
    expect(identifying[0]).toContain('farm_code')
    const note = identifying.find(r => r[0] === goodVisit.id && r[2] === '1')![identifying[0]!.indexOf('plot_note')]
    expect(note).toBe('\'=HYPERLINK("x")')
    expect((await coordinator.get(`/api/rounds/${round.roundId}/export?part=rows&group=nothing`)).status).toBe(404)
  })
})

describe('the CSV import and plots', () => {
  it('refuses, with a sentence saying why, to import into a round whose questionnaire requires plots', async () => {
    const body = { csv: 'farm,village\nF-1,V\n', fileName: 'past.csv', mode: 'all-or-nothing', mapping: { farmCode: 'farm', villageCode: 'village', questions: {} } }
    const preview = await coordinator.post<{ message: string }>(`/api/rounds/${round.roundId}/imports/preview`, body)
    expect(preview.status).toBe(409)
    expect(preview.body.message).toMatch(/at least 1 row of "Plots" per farm, and a CSV file \(one line per farm\) cannot hold them/)
    expect((await coordinator.post(`/api/rounds/${round.roundId}/imports`, body)).status).toBe(409)
  })
})

describe('models from the plots', () => {
  const N = 160
  let dir: string

  beforeAll(async () => {
    const u = lcg(20261203)
    const normal = () => Math.sqrt(-2 * Math.log(u() + 1e-12)) * Math.cos(2 * Math.PI * u())
    const visits = Array.from({ length: N }, () => {
      const farm = Math.round((0.5 + u() * 6) * 10) / 10
      const count = 1 + Math.floor(u() * 4)
      const farmEffect = 0.4 * normal()
      // An invented relation for the fit to find: smaller plots and loam are likelier to be sown.
      const rows = Array.from({ length: count }, () => {
        const size = Math.round((0.1 + u() * 3) * 100) / 100
        const soil = (['sandy', 'loam', 'clay'] as const)[Math.floor(u() * 3)]!
        const sown = 0.3 - 0.45 * size + (soil === 'loam' ? 0.5 : 0) + 0.05 * farm + farmEffect + normal() > 0
        return plot({ plot_size_ha: size, plot_soil: soil, plot_sown: sown })
      })
      const share = rows.filter(r => r.plot_sown).length / rows.length
      return makeVisit(round, { farmCode: `PLT-${Math.floor(u() * 1e9).toString(36)}` }, {
        adopted: -0.6 + 1.4 * share + 0.1 * farm + normal() > 0, farm_size_ha: farm, household_size: 2 + Math.floor(u() * 8), plots: rows
      })
    })
    const answer = await sync(visits)
    expect(answer.body.counts.stored).toBe(N)
    await acceptAll(visits.map(v => v.id))
    dir = mkdtempSync(path.join(tmpdir(), 'furrowcast-plots-'))
    writeFileSync(path.join(dir, 'visits.csv'), (await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)).body)
    writeFileSync(path.join(dir, 'plots.csv'), (await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=rows&group=plots`)).body)
  })

  // Outside reference: R's glm (probit) on the exported rows for the estimates; the cluster-robust covariance built by
  // hand in R from the probit's observed information (the bread, as Newton's method and statsmodels use; glm's vcov is
  // the expected one) and the score sums per cluster, times CR1's G/(G-1)·(n-1)/(n-k), as the engine documents.
  function rFit(formula: string, data: string, cluster: string): number[] {
    const script = `v <- read.csv("${path.join(dir, 'visits.csv')}", stringsAsFactors = FALSE)
      p <- read.csv("${path.join(dir, 'plots.csv')}", stringsAsFactors = FALSE)
      ${data}
      f <- glm(${formula}, family = binomial(link = "probit"), data = d)
      X <- model.matrix(f); n <- nrow(X); k <- ncol(X)
      y <- f$y; eta <- drop(X %*% coef(f)); q <- 2 * y - 1
      lam <- q * dnorm(q * eta) / pnorm(q * eta)
      B <- solve(crossprod(X * sqrt(lam * (lam + eta))))
      U <- X * lam
      g <- d[[${JSON.stringify(cluster)}]][as.numeric(rownames(X))]
      S <- rowsum(U, g); G <- nrow(S)
      V <- B %*% crossprod(S) %*% B * G / (G - 1) * (n - 1) / (n - k)
      cat(sprintf("%.10f", c(coef(f), sqrt(diag(V)), n)), sep = "\\n")`
    const r = spawnSync('Rscript', ['-e', script], { encoding: 'utf8' })
    expect(r.status, r.stderr).toBe(0)
    return r.stdout.trim().split('\n').map(Number)
  }

  it('fits at plot level, clustered by farm, with the same estimates and standard errors as R', async () => {
    const fit = await coordinator.post<{ counts: Record<string, number>, coefficients: Array<{ term: string, estimate: number, se: number }>, rows: { used: number } }>('/api/models/plots', {
      roundId: round.roundId, group: 'plots', level: 'plot', outcome: 'plot_sown', rowCovariates: ['plot_size_ha', 'plot_soil'], farmCovariates: ['farm_size_ha'], cluster: 'farm'
    })
    expect(fit.status, JSON.stringify(fit.body)).toBe(200)
    const plots = rectangular((await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=rows&group=plots`)).body)
    expect(fit.body.counts.rows).toBe(plots.length - 1)
    expect(fit.body.counts.kept).toBe(plots.length - 1)
    const ref = rFit('y ~ plot_size_ha + plot_soil + farm_size_ha',
      `d <- merge(p, v[, c("visit_id", "farm_size_ha")], by = "visit_id"); d$y <- as.numeric(d$plot_sown == "yes"); d$plot_soil <- factor(d$plot_soil, levels = c("clay", "loam", "sandy"))`, 'visit_id')
    const k = fit.body.coefficients.length
    expect(k).toBe(5)
    expect(fit.body.rows.used).toBe(ref[2 * k])
    // R orders the terms as the formula; the engine's terms carry the same names.
    fit.body.coefficients.forEach((c, i) => {
      expect(c.estimate).toBeCloseTo(ref[i]!, 5)
      expect(c.se).toBeCloseTo(ref[k + i]!, 5)
    })
  })

  it('fits at farm level with the share of the plots sown and "on any plot", as R does on the exported rows', async () => {
    const fit = await coordinator.post<{ counts: Record<string, number>, coefficients: Array<{ term: string, estimate: number, se: number }>, rows: { used: number } }>('/api/models/plots', {
      roundId: round.roundId, group: 'plots', level: 'farm', farmCovariates: ['farm_size_ha'], rowTerms: [{ kind: 'share_area', question: 'plot_sown', area: 'plot_size_ha' }], cluster: 'farm'
    })
    expect(fit.status, JSON.stringify(fit.body)).toBe(200)
    // Every accepted visit of the version with plots, plus the one of the first version (no rows: its share is missing).
    expect(fit.body.counts.farmsWithoutRows).toBe(1)
    expect(fit.body.counts.kept).toBe(fit.body.counts.farms - 1)
    const ref = rFit('y ~ farm_size_ha + share',
      `p$sown_area <- p$plot_size_ha * (p$plot_sown == "yes")
       a <- aggregate(cbind(sown_area, plot_size_ha) ~ visit_id, data = p, FUN = sum)
       a$share <- a$sown_area / a$plot_size_ha
       d <- merge(v, a[, c("visit_id", "share")], by = "visit_id"); d$y <- as.numeric(d$adopted == "yes")`, 'visit_id')
    expect(fit.body.coefficients.map(c => c.term)).toEqual(['(Intercept)', 'farm_size_ha', 'plot_sown:share_area'])
    fit.body.coefficients.forEach((c, i) => {
      expect(c.estimate).toBeCloseTo(ref[i]!, 5)
      expect(c.se).toBeCloseTo(ref[3 + i]!, 5)
    })

    const any = await coordinator.post<{ coefficients: Array<{ term: string }> }>('/api/models/plots', {
      roundId: round.roundId, group: 'plots', level: 'farm', farmCovariates: ['farm_size_ha'], rowTerms: [{ kind: 'any', question: 'plot_sown' }, { kind: 'share_rows', question: 'plot_sown' }]
    })
    expect(any.status, JSON.stringify(any.body)).toBe(200)
    expect(any.body.coefficients.map(c => c.term)).toEqual(expect.arrayContaining(['plot_sown:share_rows']))
  })

  it('refuses a request naming questions the group does not have', async () => {
    const bad = await coordinator.post<{ message: string }>('/api/models/plots', { roundId: round.roundId, group: 'plots', level: 'plot', outcome: 'plot_size_ha' })
    expect(bad.status).toBe(400)
    expect(bad.body.message).toMatch(/cannot enter a model|Plot size/)
  })
})
