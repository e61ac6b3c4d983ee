import { readFileSync } from 'node:fs'
import { request } from 'node:http'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, ImportBatch, User, Visit } from '../../server/db/models'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import type { ImportOutcome, ImportPreview } from '../../shared/utils/schemas/csv-import'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound } from '../support/field'
import { type Client, baseUrl, demoUser, freshClient } from '../support/server'

let coordinator: Client
let round: TestRound
let villageA: string
let villageB: string

const importsOf = (roundId: number) => `/api/rounds/${roundId}/imports`
const countImported = (roundId: number) => Visit.count({ where: { roundId, source: 'import' } })
const mapping = { farmCode: 'farm', villageCode: 'village', questions: { adopted: 'adopted', farm_size_ha: 'farm_size_ha', household_size: 'household_size', group_member: 'group_member' } }
const body = (csv: string, extra: Record<string, unknown> = {}) => ({ csv, fileName: 'past.csv', mapping, ...extra })

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id)
  const detail = await coordinator.get<{ villages: Array<{ id: number, code: string }> }>(`/api/rounds/${round.roundId}`)
  villageA = detail.body.villages.find(v => v.id === round.assignedVillageId)!.code
  villageB = detail.body.villages.find(v => v.id === round.otherVillageId)!.code
})
afterAll(closeTestDatabase)

function mixedCsv(tag: string) {
  return [
    'farm,village,adopted,farm_size_ha,household_size,group_member',
    `${tag}-1,${villageA},yes,2.5,6,no`,
    `${tag}-2,${villageB},No,1.25,4,`,
    `${tag}-3,${villageA},maybe,2,5,yes`,
    `${tag}-4,NOWHERE,1,3,7,0`,
    `${tag}-5,${villageB},true,two,3,1`,
    `${tag}-6,${villageA},0,4,99,false`,
    `${tag}-7,${villageA},1,4`
  ].join('\n')
}

describe('preview: columns, mapped rows and a report per row, nothing written', () => {
  it('maps the rows and reports each bad row with its row number, field and reason', async () => {
    const before = await Visit.count({ where: { roundId: round.roundId } })
    const answer = await coordinator.post<ImportPreview>(`${importsOf(round.roundId)}/preview`, body(mixedCsv('PV')))
    expect(answer.status).toBe(200)
    expect(answer.body.columns).toEqual(['farm', 'village', 'adopted', 'farm_size_ha', 'household_size', 'group_member'])
    expect(answer.body.delimiter).toBe(',')
    expect(answer.body).toMatchObject({ rowCount: 7, validCount: 2, rejectedCount: 5, mappingProblems: [] })
    expect(answer.body.rows[0]).toEqual({ row: 2, farmCode: 'PV-1', villageCode: villageA, visitDate: null, answers: { adopted: true, farm_size_ha: 2.5, household_size: 6, group_member: false }, valid: true })
    expect(answer.body.rows[1]!.answers).toEqual({ adopted: false, farm_size_ha: 1.25, household_size: 4 })
    const byRow = (row: number) => answer.body.report.filter(p => p.row === row).map(p => [p.field, p.message])
    expect(byRow(4)).toEqual([['adopted', 'Choose yes or no (found "maybe")']])
    expect(byRow(5)).toEqual([['villageCode', expect.stringMatching(/^"NOWHERE" is not a village of this round/)]])
    expect(byRow(6)).toEqual([['farm_size_ha', 'Enter a number (found "two")']])
    expect(byRow(7)).toEqual([['household_size', 'At most 30 (found "99")']])
    expect(byRow(8)).toEqual([['row', 'This row has 4 values; the header has 6 columns.']])
    expect(await Visit.count({ where: { roundId: round.roundId } })).toBe(before)
  })

  it('reads semicolon and tab separated files as well', async () => {
    const semi = mixedCsv('SC').replaceAll(',', ';')
    const a = await coordinator.post<ImportPreview>(`${importsOf(round.roundId)}/preview`, body(semi))
    expect(a.status).toBe(200)
    expect(a.body).toMatchObject({ delimiter: ';', rowCount: 7, validCount: 2 })
    const b = await coordinator.post<ImportPreview>(`${importsOf(round.roundId)}/preview`, body(mixedCsv('TB').replaceAll(',', '\t')))
    expect(b.body).toMatchObject({ delimiter: '\t', rowCount: 7, validCount: 2 })
  })

  it('names a required question left without a column, and import refuses it with 400', async () => {
    const { household_size: _left, ...questions } = mapping.questions
    const csv = mixedCsv('UM')
    const preview = await coordinator.post<ImportPreview>(`${importsOf(round.roundId)}/preview`, body(csv, { mapping: { ...mapping, questions } }))
    expect(preview.status).toBe(200)
    expect(preview.body.mappingProblems).toEqual(['Choose a column for the required question "Household size" (household_size).'])
    expect(preview.body.validCount).toBe(0)
    const imported = await coordinator.post(importsOf(round.roundId), body(csv, { mapping: { ...mapping, questions }, mode: 'valid-only' }))
    expect(imported.status).toBe(400)
    expect(imported.body.message).toMatch(/required question "Household size"/)
    expect(await countImported(round.roundId)).toBe(0)
  })

  it('answers 400 with the field to an incomplete request', async () => {
    const answer = await coordinator.post<{ message: string, data: { fieldErrors: Record<string, string> } }>(`${importsOf(round.roundId)}/preview`, { csv: 'a,b\n1,2\n' })
    expect(answer.status).toBe(400)
    expect(answer.body.message).toBe('mapping: Map the columns to the questions')
    expect(answer.body.data.fieldErrors).toEqual({ mapping: 'Map the columns to the questions' })
  })

  it('refuses a column the file does not have, or a key that is not a question', async () => {
    const a = await coordinator.post(`${importsOf(round.roundId)}/preview`, body(mixedCsv('NC'), { mapping: { ...mapping, farmCode: 'farm_id' } }))
    expect(a.status).toBe(400)
    expect(a.body.message).toBe('Farm code: the file has no column "farm_id".')
    const b = await coordinator.post(`${importsOf(round.roundId)}/preview`, body(mixedCsv('NK'), { mapping: { ...mapping, questions: { ...mapping.questions, colour: 'farm' } } }))
    expect(b.status).toBe(400)
    expect(b.body.message).toMatch(/"colour" is not a question/)
  })
})

describe('files that cannot be read get a clear 400, and nothing is written', () => {
  const cases: Array<[string, string, RegExp]> = [
    ['an empty file', '', /^The file is empty\.$/],
    ['blank lines only', '\n\n  \n', /^The file is empty\.$/],
    ['a header only', 'farm,village,adopted,farm_size_ha,household_size,group_member\n', /header row but no data rows/],
    ['a colon-separated file', 'farm:village:adopted:farm_size_ha\nF1:V:yes:2\n', /Only one column was found: the file seems to be separated by colons/],
    ['a file read in the wrong encoding', 'farm,village,adopted\nF1,Kas\uFFFDma,yes\n', /not in UTF-8/]
  ]
  for (const [what, csv, message] of cases) {
    it(`refuses ${what} in preview and in import`, async () => {
      for (const route of [`${importsOf(round.roundId)}/preview`, importsOf(round.roundId)]) {
        const answer = await coordinator.post(route, body(csv, { mode: 'valid-only' }))
        expect(answer.status).toBe(400)
        expect(answer.body.message).toMatch(message)
      }
      expect(await countImported(round.roundId)).toBe(0)
    })
  }

  it('refuses a body whose bytes are not UTF-8 (a Latin-1 file sent as it is)', async () => {
    const json = Buffer.from(JSON.stringify(body('farm,village,adopted\nF1,Kas_ma,yes\n')), 'utf8')
    json[json.indexOf('_')] = 0xE9 // é in Latin-1: not valid UTF-8 on its own
    const answer = await rawPost(importsOf(round.roundId), json, json.length)
    expect(answer.status).toBe(400)
    expect(JSON.parse(answer.text).message).toMatch(/not in UTF-8/)
  })

  it('answers 413 to more than 10 MB of text', async () => {
    const row = `X-1,${villageA},yes,2,5,no\n`
    const csv = `farm,village,adopted,farm_size_ha,household_size,group_member\n${row.repeat(Math.ceil(10.2 * 1024 * 1024 / row.length))}`
    const answer = await coordinator.post(importsOf(round.roundId), body(csv, { mode: 'valid-only' }))
    expect(answer.status).toBe(413)
    expect(answer.body.message).toMatch(/larger than the 10 MB limit/)
    expect(await countImported(round.roundId)).toBe(0)
  })

  it('answers 413 to a declared 200 MB upload at once, without reading it', async () => {
    const started = Date.now()
    const answer = await rawPost(importsOf(round.roundId), Buffer.from('{"csv":"farm,village'), 200 * 1024 * 1024)
    expect(answer.status).toBe(413)
    expect(JSON.parse(answer.text).message).toMatch(/larger than the 10 MB limit/)
    expect(Date.now() - started).toBeLessThan(10_000)
  })
})

describe('a body sent without a declared length', () => {
  it('is refused with 413 as soon as it passes the limit', async () => {
    const answer = await chunkedPost(importsOf(round.roundId), 24)
    expect(answer.status).toBe(413)
    expect(JSON.parse(answer.text).message).toMatch(/larger than the 10 MB limit/)
  })
})

/** Streams megabytes of JSON text with no content-length (chunked) and resolves on the answer. */
function chunkedPost(route: string, megabytes: number): Promise<{ status: number, text: string }> {
  return new Promise((resolve, reject) => {
    const req = request(`${baseUrl()}${route}`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'cookie': coordinator.cookieHeader(), 'x-forwarded-for': '10.77.1.3' }
    }, (res) => {
      let text = ''
      res.setEncoding('utf8')
      res.on('data', (c: string) => (text += c))
      res.on('end', () => {
        resolve({ status: res.statusCode!, text })
        req.destroy()
      })
    })
    req.on('error', reject)
    req.write('{"csv":"')
    const chunk = 'x'.repeat(1024 * 1024)
    let sent = 0
    const more = () => {
      while (sent < megabytes) {
        sent++
        if (!req.write(chunk)) return void req.once('drain', more)
      }
      req.end('"}')
    }
    more()
  })
}

/** Posts raw bytes with a chosen content-length and resolves on the answer, whether or not the body was all sent. */
function rawPost(route: string, bytes: Buffer, declaredLength: number): Promise<{ status: number, text: string }> {
  return new Promise((resolve, reject) => {
    const req = request(`${baseUrl()}${route}`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'content-length': declaredLength, 'cookie': coordinator.cookieHeader(), 'x-forwarded-for': '10.77.1.2' }
    }, (res) => {
      let text = ''
      res.setEncoding('utf8')
      res.on('data', (c: string) => (text += c))
      res.on('end', () => {
        resolve({ status: res.statusCode!, text })
        req.destroy()
      })
    })
    req.on('error', reject)
    req.write(bytes)
    if (bytes.length === declaredLength) req.end()
  })
}

describe('import: all-or-nothing, valid-only, marked as imported, audited', () => {
  it('all-or-nothing writes nothing when a row fails and answers 422 with the report', async () => {
    const answer = await coordinator.post<ImportOutcome>(importsOf(round.roundId), body(mixedCsv('AN'), { mode: 'all-or-nothing' }))
    expect(answer.status).toBe(422)
    expect(answer.body).toMatchObject({ importedCount: 0, rowCount: 7, rejectedCount: 5 })
    expect(answer.body.message).toMatch(/^Nothing was imported: 5 of 7 rows have problems/)
    expect(answer.body.report.map(p => p.row)).toEqual([4, 5, 6, 7, 8])
    expect(await countImported(round.roundId)).toBe(0)
    expect(await ImportBatch.count({ where: { roundId: round.roundId } })).toBe(0)
  })

  it('valid-only stores exactly the valid rows as accepted imported visits and returns the rejected ones', async () => {
    const answer = await coordinator.post<ImportOutcome>(importsOf(round.roundId), body(mixedCsv('VO'), { mode: 'valid-only' }))
    expect(answer.status).toBe(200)
    expect(answer.body).toMatchObject({ importedCount: 2, rowCount: 7, rejectedCount: 5 })
    const stored = await Visit.findAll({ where: { roundId: round.roundId, source: 'import' }, order: [['farmCode', 'ASC']] })
    expect(stored.map(v => v.farmCode)).toEqual(['VO-1', 'VO-2'])
    const me = await User.findOne({ where: { email: demoUser('coordinator').email } })
    for (const v of stored) {
      expect(v).toMatchObject({ reviewState: 'accepted', enumeratorId: me!.id, lat: null, lon: null, manualLocationReason: 'imported', importId: answer.body.importId, questionnaireVersionId: round.versionId })
      expect(v.id).toMatch(/^[0-9a-f-]{36}$/)
    }
    expect(stored[0]!.answers).toEqual({ adopted: true, farm_size_ha: 2.5, household_size: 6, group_member: false })
    expect(stored[0]!.adopted).toBe(1)
    expect(stored[1]!.adopted).toBe(0)
    const lines = answer.body.rejectedCsv.split('\n')
    expect(lines[0]).toBe('farm,village,adopted,farm_size_ha,household_size,group_member,reason')
    expect(lines.length).toBe(6)
    // The reason names the question by its label, never by its internal key.
    expect(lines[1]).toBe('VO-3,' + villageA + ',maybe,2,5,yes,"Has this farm adopted test seed this season? — Choose yes or no (found ""maybe"")"')
    const batch = await ImportBatch.findByPk(answer.body.importId)
    expect(batch).toMatchObject({ fileName: 'past.csv', mode: 'valid-only', rowsTotal: 7, rowsImported: 2, rowsRejected: 5 })
    const entry = await AuditEntry.findOne({ where: { action: 'visits.import', entityId: String(round.roundId) } })
    expect(entry!.details).toMatchObject({ importId: batch!.id, imported: 2, rejected: 5 })
  })

  it('refuses the same file a second time (by its hash), and takes a corrected file', async () => {
    const before = await countImported(round.roundId)
    const again = await coordinator.post(importsOf(round.roundId), body(mixedCsv('VO'), { mode: 'valid-only' }))
    expect(again.status).toBe(409)
    expect(again.body.message).toMatch(/imported into this round already .*past\.csv/)
    expect(await countImported(round.roundId)).toBe(before)
    const corrected = `farm,village,adopted,farm_size_ha,household_size,group_member\nVO-3,${villageA},yes,2,5,yes\nVO-1,${villageB},no,1,2,no\n`
    const answer = await coordinator.post<ImportOutcome>(importsOf(round.roundId), body(corrected, { mode: 'all-or-nothing' }))
    expect(answer.status).toBe(200)
    expect(answer.body.importedCount).toBe(2)
    // VO-1 is in the round twice now: both copies carry the duplicate farm code flag, as synced visits do.
    const twice = await Visit.findAll({ where: { roundId: round.roundId, farmCode: 'VO-1' } })
    expect(twice.map(v => v.flags.duplicateFarmCode)).toEqual([true, true])
    // The imported copy is not accepted on its own: it waits in review with its flag.
    expect(twice.find(v => v.importId === answer.body.importId)!.reviewState).toBe('received')
    expect((await Visit.findOne({ where: { roundId: round.roundId, farmCode: 'VO-3' } }))!.reviewState).toBe('accepted')
    expect(answer.body.message).toContain('1 of them use a farm code seen twice')
  })

  it('reads decimal commas in a semicolon file, dates visits from a mapped column, and sends farm codes twice in a file to review', async () => {
    const csv = `farm;village;adopted;farm_size_ha;household_size;day\nDC-1;${villageA};yes;2,75;5;2026-03-14\nDC-1;${villageA};no;1,5;3;2026-03-15\nDC-2;${villageB};no;0,5;2;2026-13-01\n`
    const request = body(csv, { mode: 'valid-only', mapping: { ...mapping, visitDate: 'day', questions: { adopted: 'adopted', farm_size_ha: 'farm_size_ha', household_size: 'household_size' } } })
    const preview = await coordinator.post<ImportPreview>(`${importsOf(round.roundId)}/preview`, request)
    expect(preview.status).toBe(200)
    expect(preview.body.rows[0]).toMatchObject({ farmCode: 'DC-1', visitDate: '2026-03-14', answers: { farm_size_ha: 2.75 }, valid: true })
    expect(preview.body.report).toEqual([{ row: 4, field: 'visitDate', column: 'day', message: 'Write the visit date as YYYY-MM-DD, e.g. 2026-03-14 (found "2026-13-01")' }])
    const answer = await coordinator.post<ImportOutcome>(importsOf(round.roundId), request)
    expect(answer.status).toBe(200)
    const stored = await Visit.findAll({ where: { roundId: round.roundId, farmCode: 'DC-1' }, order: [['savedAt', 'ASC']] })
    expect(stored.map(v => v.answers.farm_size_ha)).toEqual([2.75, 1.5])
    expect(stored.map(v => v.savedAt.toISOString().slice(0, 10))).toEqual(['2026-03-14', '2026-03-15'])
    expect(stored.map(v => v.reviewState)).toEqual(['received', 'received'])
    expect(stored.every(v => v.flags.duplicateFarmCode === true)).toBe(true)
  })

  it('accepts the yes/no words of the file and a configured pair', async () => {
    const csv = `farm,village,adopted,farm_size_ha,household_size,group_member\nYW-1,${villageA},TRUE,1,2,increase\nYW-2,${villageA},False,1,2,decrease\n`
    const plain = await coordinator.post<ImportPreview>(`${importsOf(round.roundId)}/preview`, body(csv))
    expect(plain.body.report.map(p => p.field)).toEqual(['group_member', 'group_member'])
    const paired = await coordinator.post<ImportPreview>(`${importsOf(round.roundId)}/preview`, body(csv, { yesNoWords: { yes: 'Increase', no: 'DECREASE' } }))
    expect(paired.body.report).toEqual([])
    expect(paired.body.rows.map(r => r.answers)).toEqual([
      { adopted: true, farm_size_ha: 1, household_size: 2, group_member: true },
      { adopted: false, farm_size_ha: 1, household_size: 2, group_member: false }
    ])
  })

  it('valid-only with no valid row writes nothing (422)', async () => {
    const csv = `farm,village,adopted,farm_size_ha,household_size,group_member\nNV-1,NOWHERE,yes,1,2,no\n`
    const answer = await coordinator.post<ImportOutcome>(importsOf(round.roundId), body(csv, { mode: 'valid-only' }))
    expect(answer.status).toBe(422)
    expect(answer.body.message).toMatch(/none of the 1 rows/)
    expect(await Visit.count({ where: { farmCode: 'NV-1' } })).toBe(0)
  })

  it('answers 404 for an unknown round and 403 to enumerators and funders', async () => {
    expect((await coordinator.post(importsOf(999999), body(mixedCsv('NF')))).status).toBe(404)
    for (const role of ['enumerator', 'funder', 'admin']) {
      const client = freshClient()
      await client.signIn(demoUser(role).email)
      const answer = await client.post(importsOf(round.roundId), body(mixedCsv('RL'), { mode: 'valid-only' }))
      expect(answer.status).toBe(403)
      expect((await client.post(`${importsOf(round.roundId)}/preview`, body(mixedCsv('RL')))).status).toBe(403)
    }
  })
})

describe('an outside dataset imported and fitted reproduces its reference coefficients', () => {
  it('Spector & Mazzeo (1980): probit of grade on average, testscore and participation', async () => {
    const tag = Date.now().toString(36).toUpperCase()
    const village = await coordinator.post<{ id: number, code: string }>('/api/villages', { code: `PE${tag}`, name: `Reference village ${tag}`, district: 'Test district', centreLat: -12.9, centreLon: 31.2 })
    expect(village.status).toBe(200)
    const created = await coordinator.post<{ id: number }>('/api/rounds', { name: `Past study ${tag}`, technology: 'the new teaching method', season: '1980' })
    const roundId = created.body.id
    const put = (route: string, b: unknown) => coordinator.request('PUT', route, b)
    expect((await put(`/api/rounds/${roundId}/questionnaire`, { questions: [
      { key: 'average', label: 'Grade point average', type: 'number', required: true },
      { key: 'testscore', label: 'Test score', type: 'number', required: true },
      { key: 'participation', label: 'Took part in the programme?', type: 'yesno', required: true }
    ] })).status).toBe(200)
    expect((await put(`/api/rounds/${roundId}/villages`, { villageIds: [village.body.id] })).status).toBe(200)
    expect((await coordinator.request('PATCH', `/api/rounds/${roundId}`, { status: 'open' })).status).toBe(200)

    const fixture = readFileSync(path.join(import.meta.dirname, '../fixtures/reference/program-effectiveness.csv'), 'utf8')
    const lines = fixture.trimEnd().split('\n')
    const csv = [`${lines[0]},"village"`, ...lines.slice(1).map(l => `${l},"${village.body.code}"`)].join('\n')
    const imported = await coordinator.post<ImportOutcome>(importsOf(roundId), {
      csv,
      fileName: 'program-effectiveness.csv',
      mode: 'valid-only',
      mapping: { farmCode: 'column 1', villageCode: 'village', questions: { adopted: 'grade', average: 'average', testscore: 'testscore', participation: 'participation' } },
      yesNoWords: { yes: 'increase', no: 'decrease' }
    })
    expect(imported.status).toBe(200)
    expect(imported.body).toMatchObject({ importedCount: 32, rejectedCount: 0 })

    const started = await coordinator.post<ModelRunSummary>('/api/models', {
      roundId, link: 'probit', se: 'conventional', covariates: [{ key: 'average' }, { key: 'testscore' }, { key: 'participation' }]
    })
    expect(started.status).toBe(202)
    let run: ModelRunDetail | undefined
    for (let i = 0; i < 120 && (!run || run.status === 'running'); i++) {
      if (run) await new Promise(resolve => setTimeout(resolve, 250))
      run = (await coordinator.get<ModelRunDetail>(`/api/models/${started.body.id}`)).body
    }
    expect(run!.status).toBe('done')
    const reference = JSON.parse(readFileSync(path.join(import.meta.dirname, '../fixtures/reference/reference-values.json'), 'utf8'))
    const terms = reference.models.find((m: { id: string }) => m.id === 'spector_probit').terms as Record<string, { coef: number, se: number }>
    const got = Object.fromEntries(run!.results!.coefficients.map(c => [c.term, c]))
    expect(Object.keys(got)).toHaveLength(4)
    for (const [term, want] of Object.entries(terms)) {
      const c = got[term] ?? Object.values(got).find(x => x.term.startsWith(term))
      expect(c, term).toBeDefined()
      expect(Math.abs(c!.estimate - want.coef) / Math.abs(want.coef), `${term} coefficient`).toBeLessThan(1e-6)
      expect(Math.abs(c!.se - want.se) / Math.abs(want.se), `${term} standard error`).toBeLessThan(1e-6)
    }
  })
})
