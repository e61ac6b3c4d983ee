import { createHash, randomUUID } from 'node:crypto'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { User, Village, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { type Client, baseUrl, demoUser, freshClient } from '../support/server'
import { dataFingerprint } from '../support/writes'

// Hostile input across the routes, one table: wrong types, oversize strings, broken encodings, deep nesting,
// injection strings, spreadsheet traps, reserved keys and files that are not photos. Every one must get a clear
// 4xx with a readable message (never a 500 or a stack), and leave every table exactly as it was.

type Role = 'admin' | 'coordinator' | 'enumerator' | 'funder' | 'anonymous'
interface Context { draftRoundId: number, round: TestRound, visitId: string, villageCode: string }
interface Case {
  as: Role
  method: 'POST' | 'PUT' | 'PATCH'
  path: (c: Context) => string
  body?: (c: Context) => unknown
  /** A body sent as it is (bytes or text), for what JSON.stringify cannot make. */
  raw?: (c: Context) => Buffer | string
  type?: string
  status: number
}

const clients = new Map<Role, Client>()
let ctx: Context

beforeAll(async () => {
  testDatabase()
  for (const role of ['admin', 'coordinator', 'enumerator', 'funder'] as const) {
    const client = freshClient()
    await client.signIn(demoUser(role).email)
    clients.set(role, client)
  }
  clients.set('anonymous', freshClient())
  const coordinator = clients.get('coordinator')!
  const enumerator = await User.findOne({ where: { email: demoUser('enumerator').email } })
  const round = await makeRound(coordinator, enumerator!.id, [
    { key: 'note', label: 'Anything else', type: 'text', maxLength: 200 },
    { key: 'soil', label: 'Soil', type: 'choice', options: [{ value: 'sandy', label: 'Sandy' }, { value: 'clay', label: 'Clay' }] }
  ])
  const visit = makeVisit(round)
  expect((await clients.get('enumerator')!.post('/api/sync/visits', { visits: [visit] })).status).toBe(200)
  const draft = await coordinator.post<{ id: number }>('/api/rounds', { name: 'Adversarial draft round', technology: 'test seed', season: '2026' })
  const place = await Village.findByPk(round.assignedVillageId)
  ctx = { draftRoundId: draft.body.id, round, visitId: visit.id, villageCode: place!.code }
})
afterAll(closeTestDatabase)

const LONE_HIGH = '\uD800'
const LONE_LOW = '\uDFFF'
const NUL = '\u0000'
const BIG = 'x'.repeat(10_000)
const XSS = '<img src=x onerror=alert(1)>'
const nested = (depth: number): unknown => {
  let value: unknown = 1
  for (let i = 0; i < depth; i++) value = [value]
  return value
}
// A JSON body whose string holds bytes that are not UTF-8 (a Latin-1 "é" and a stray continuation byte).
const notUtf8 = (json: string, marker: string) => {
  const [before, after] = json.split(marker)
  return Buffer.concat([Buffer.from(before!), Buffer.from([0xE9, 0x80]), Buffer.from(after!)])
}

const village = (over: Record<string, unknown>) => () => ({ code: `ADV-${randomUUID().slice(0, 6)}`, name: 'Mto wa Mbu', district: 'Lowland', centreLat: -3.3, centreLon: 35.8, ...over })
const roundBody = (over: Record<string, unknown>) => () => ({ name: 'Short rains survey', technology: 'storage bags', season: '2026', ...over })
const questions = (q: Record<string, unknown>) => () => ({ questions: [{ key: 'farm_size', label: 'Farm size', type: 'number', ...q }] })
// Every text in Kiswahili but what `sw` overrides; the adoption question is added by the server and translated here.
const withLanguages = (sw: Record<string, unknown>) => () => ({
  questions: [{ key: 'farm_size', label: 'Farm size', type: 'number' }],
  languages: [{ code: 'en', name: 'English' }, { code: 'sw', name: 'Kiswahili' }],
  translations: { sw }
})
const visitWith = (over: Record<string, unknown>, answers: Record<string, unknown> = {}) => (c: Context) => ({ visits: [makeVisit(c.round, over, answers)] })
const syncRaw = (edit: (json: string) => string) => (c: Context) => edit(JSON.stringify({ visits: [makeVisit(c.round)] }))
const review = (body: Record<string, unknown>) => () => body
const csvOf = (rows: string[]) => `farm,village,adopted,farm_size_ha,household_size,note\n${rows.join('\n')}\n`
const importBody = (csv: (c: Context) => string, over: Record<string, unknown> = {}) => (c: Context) => ({
  csv: csv(c),
  fileName: 'past.csv',
  mode: 'all-or-nothing',
  mapping: { farmCode: 'farm', villageCode: 'village', questions: { adopted: 'adopted', farm_size_ha: 'farm_size_ha', household_size: 'household_size', note: 'note' } },
  ...over
})
const settings = (over: Record<string, unknown>) => () => ({ name: 'Furrowcast demo', defaultClusterVariable: 'village', minVisitsForFunders: 5, funderOrganisations: [], ...over })
const photo = (bytes: Buffer, type: string) => ({ bytes, type })
const JPEG = Buffer.concat([Buffer.from([0xFF, 0xD8, 0xFF, 0xE0]), Buffer.alloc(600, 1)])
const PNG = Buffer.concat([Buffer.from([0x89, 0x50, 0x4E, 0x47, 0x0D, 0x0A, 0x1A, 0x0A]), Buffer.alloc(600, 2)])
const PHOTOS: Record<string, { bytes: Buffer, type: string }> = {
  'an HTML page sent as image/jpeg': photo(Buffer.from('<!doctype html><script>window.__xss=1</script>'), 'image/jpeg'),
  'an SVG with script sent as image/png': photo(Buffer.from('<svg xmlns="http://www.w3.org/2000/svg" onload="alert(1)"/>'), 'image/png'),
  'a PNG sent as image/jpeg': photo(PNG, 'image/jpeg'),
  'a JPEG sent as image/webp': photo(JPEG, 'image/webp'),
  'a PDF sent as image/jpeg': photo(Buffer.from('%PDF-1.7\n%âãÏÓ'), 'image/jpeg'),
  'a JPEG sent as text/html': photo(JPEG, 'text/html')
}
const PHOTO_STATUS: Record<string, number> = {
  'an HTML page sent as image/jpeg': 415,
  'an SVG with script sent as image/png': 415,
  'a PNG sent as image/jpeg': 422,
  'a JPEG sent as image/webp': 422,
  'a PDF sent as image/jpeg': 415,
  'a JPEG sent as text/html': 415
}

const CASES: Record<string, Case> = {
  // Villages
  'village name with a lone surrogate': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: `Mto ${LONE_HIGH}` }), status: 400 },
  'village name with a lone low surrogate': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: `${LONE_LOW}Mto` }), status: 400 },
  'village name with NUL': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: `Mto${NUL}` }), status: 400 },
  'village name with bytes that are not UTF-8': { as: 'coordinator', method: 'POST', path: () => '/api/villages', raw: c => notUtf8(JSON.stringify(village({ name: 'Mto MARK' })(c)), 'MARK'), status: 400 },
  'village name with an escape sequence': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: 'Mto\u001B[2J' }), status: 400 },
  'village name on two lines': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: 'Mto\nwa Mbu' }), status: 400 },
  'village name of 10,000 characters': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: BIG }), status: 400 },
  'village name as a number': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: 42 }), status: 400 },
  'village name as an array': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: ['Mto'] }), status: 400 },
  'village name as an object': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ name: { $gt: '' } }), status: 400 },
  'village district with DEL': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ district: 'Low\u007Fland' }), status: 400 },
  'village code with SQL': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ code: '\'; DROP TABLE villages; --' }), status: 400 },
  'village code with markup': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ code: XSS }), status: 400 },
  'village latitude as text': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ centreLat: '-3.3' }), status: 400 },
  'village latitude off the globe': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ centreLat: 91 }), status: 400 },
  'village with NaN (not JSON)': { as: 'coordinator', method: 'POST', path: () => '/api/villages', raw: () => '{"code":"ADV-NAN","name":"Mto","district":"Lowland","centreLat":NaN,"centreLon":0}', status: 400 },
  'village body cut off': { as: 'coordinator', method: 'POST', path: () => '/api/villages', raw: () => '{"code":"ADV-CUT","name":', status: 400 },
  'village body as an array': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: () => [village({})()], status: 400 },
  'village body as null': { as: 'coordinator', method: 'POST', path: () => '/api/villages', raw: () => 'null', status: 400 },
  'village boundary that is not GeoJSON': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ boundary: { type: 'Circle', radius: 3 } }), status: 400 },
  'village boundary with an open ring': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ boundary: { type: 'Polygon', coordinates: [[[0, 0], [1, 0], [1, 1], [0, 2]]] } }), status: 400 },
  'village boundary nested 3,000 deep': { as: 'coordinator', method: 'POST', path: () => '/api/villages', body: village({ boundary: { type: 'Polygon', coordinates: nested(3000) } }), status: 413 },
  // Rounds
  'round name with a lone surrogate': { as: 'coordinator', method: 'POST', path: () => '/api/rounds', body: roundBody({ name: `Short rains ${LONE_HIGH}` }), status: 400 },
  'round name with NUL': { as: 'coordinator', method: 'POST', path: () => '/api/rounds', body: roundBody({ name: `Short${NUL}rains` }), status: 400 },
  'round name with a bell': { as: 'coordinator', method: 'POST', path: () => '/api/rounds', body: roundBody({ name: 'Short rains\u0007' }), status: 400 },
  'round name with a non-character': { as: 'coordinator', method: 'POST', path: () => '/api/rounds', body: roundBody({ name: 'Short rains\uFFFF' }), status: 400 },
  'round name of spaces only': { as: 'coordinator', method: 'POST', path: () => '/api/rounds', body: roundBody({ name: '      ' }), status: 400 },
  'round technology too long': { as: 'coordinator', method: 'POST', path: () => '/api/rounds', body: roundBody({ technology: 't'.repeat(161) }), status: 400 },
  'round season as true': { as: 'coordinator', method: 'POST', path: () => '/api/rounds', body: roundBody({ season: true }), status: 400 },
  'round status that does not exist': { as: 'coordinator', method: 'PATCH', path: c => `/api/rounds/${c.draftRoundId}`, body: () => ({ status: 'published' }), status: 400 },
  'round status as an array': { as: 'coordinator', method: 'PATCH', path: c => `/api/rounds/${c.draftRoundId}`, body: () => ({ status: ['open'] }), status: 400 },
  'round id that is not a number': { as: 'coordinator', method: 'PATCH', path: () => '/api/rounds/1%20OR%201=1', body: () => ({ status: 'open' }), status: 400 },
  // Questionnaires (a draft round)
  'question keyed constructor': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ key: 'constructor' }), status: 400 },
  'question keyed __proto__': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ key: '__proto__' }), status: 400 },
  'question keyed prototype': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ key: 'prototype' }), status: 400 },
  'question keyed then': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ key: 'then' }), status: 400 },
  'question keyed toString': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ key: 'toString' }), status: 400 },
  'question keyed valueof': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ key: 'valueof' }), status: 400 },
  'question label with NUL': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ label: `Farm${NUL}size` }), status: 400 },
  'question label with a lone surrogate': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ label: `Farm size ${LONE_LOW}` }), status: 400 },
  'question help with NUL': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ help: `In hectares${NUL}` }), status: 400 },
  'question unit with a lone surrogate': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ unit: `ha${LONE_HIGH}` }), status: 400 },
  'option label with NUL': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ type: 'choice', options: [{ value: 'a', label: `Sandy${NUL}` }, { value: 'b', label: 'Clay' }] }), status: 400 },
  'option valued constructor': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ type: 'choice', options: [{ value: 'constructor', label: 'Sandy' }, { value: 'b', label: 'Clay' }] }), status: 400 },
  'question type that does not exist': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ type: 'html' }), status: 400 },
  'text question 100,000 characters long': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ type: 'text', maxLength: 100_000 }), status: 400 },
  'number question whose minimum is above its maximum': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: questions({ min: 10, max: 1 }), status: 400 },
  'questionnaire of 201 questions': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: () => ({ questions: Array.from({ length: 201 }, (_, i) => ({ key: `q${i}`, label: 'Q', type: 'yesno' })) }), status: 400 },
  'translation with NUL': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: withLanguages({ farm_size: { label: `Ukubwa${NUL}` } }), status: 400 },
  'translation keyed __proto__': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: () => JSON.parse(`{"questions":[{"key":"farm_size","label":"Farm size","type":"number"}],"languages":[{"code":"en","name":"English"},{"code":"sw","name":"Kiswahili"}],"translations":{"sw":{"__proto__":{"label":"x"}}}}`), status: 400 },
  'translation missing for a declared language': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: withLanguages({}), status: 400 },
  'language tag holding markup': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: () => ({ questions: [{ key: 'farm_size', label: 'Farm size', type: 'number' }], languages: [{ code: 'en', name: 'English' }, { code: '<b>', name: 'Bold' }] }), status: 400 },
  'questionnaire as an object of questions': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/questionnaire`, body: () => ({ questions: { 0: { key: 'a', label: 'A', type: 'yesno' } } }), status: 400 },
  'round villages given as text': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/villages`, body: () => ({ villageIds: ['1'] }), status: 400 },
  'round villages 2,001 long': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/villages`, body: () => ({ villageIds: Array.from({ length: 2001 }, (_, i) => i + 1) }), status: 400 },
  'assignment to a negative person': { as: 'coordinator', method: 'PUT', path: c => `/api/rounds/${c.draftRoundId}/assignments`, body: () => ({ assignments: [{ userId: -1, villageId: 1 }] }), status: 400 },
  // Sync: a batch whose only record is bad is refused as a whole (422) with the reason for the record
  'visit text answer with a lone surrogate': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({}, { note: `Good harvest ${LONE_HIGH}` }), status: 422 },
  'visit text answer with NUL': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({}, { note: `Good${NUL}harvest` }), status: 422 },
  'visit text answer with a bell': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({}, { note: 'Good harvest\u0007' }), status: 422 },
  'visit text answer with bytes that are not UTF-8': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', raw: c => notUtf8(JSON.stringify(visitWith({}, { note: 'Good MARK' })(c)), 'MARK'), status: 400 },
  'visit text answer of 10,000 characters': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({}, { note: BIG }), status: 422 },
  'visit number answer as text': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({}, { farm_size_ha: '2.5' }), status: 422 },
  'visit choice answer outside the list': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({}, { soil: XSS }), status: 422 },
  // h3 refuses a JSON body holding these keys before any handler sees it (its parser guards prototypes).
  'visit answer keyed constructor': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({}, { constructor: 'x' }), status: 400 },
  'visit answer keyed __proto__': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', raw: syncRaw(j => j.replace('"answers":{', '"answers":{"__proto__":{"adopted":false},')), status: 400 },
  'visit answer nested 3,000 deep': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({}, { note: nested(3000) }), status: 413 },
  'visit location reason with NUL': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({ location: { kind: 'manual', reason: `No signal${NUL}` } }), status: 422 },
  'visit farm code with markup': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({ farmCode: XSS }), status: 422 },
  'visit farm code that is a formula': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({ farmCode: '=HYPERLINK("http://x.example")' }), status: 422 },
  'visit id that is not a UUID': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({ id: '1 OR 1=1' }), status: 422 },
  'visit village as text': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: visitWith({ villageId: '1' }), status: 422 },
  'visit that is a string': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: () => ({ visits: ['a visit'] }), status: 422 },
  'sync batch that is not a list': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: () => ({ visits: { 0: {} } }), status: 400 },
  'sync batch that is empty': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: () => ({ visits: [] }), status: 400 },
  'sync batch of 501 records': { as: 'enumerator', method: 'POST', path: () => '/api/sync/visits', body: () => ({ visits: Array.from({ length: 501 }, () => ({})) }), status: 400 },
  // Review
  'send-back reason with NUL': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'send_back', reason: `Fix it${NUL}` }), status: 400 },
  'send-back reason with a lone surrogate': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'send_back', reason: `Fix it ${LONE_HIGH}` }), status: 400 },
  'send-back reason of 10,000 characters': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'send_back', reason: BIG }), status: 400 },
  'farm code correction with a formula': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'farm_code', farmCode: '=cmd|x', reason: 'Typed wrong' }), status: 400 },
  'farm code correction with a NUL reason': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'farm_code', farmCode: 'F-77', reason: `Typed wrong${NUL}` }), status: 400 },
  'farm code correction of 41 characters': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'farm_code', farmCode: 'F'.repeat(41), reason: 'Typed wrong' }), status: 400 },
  'correction with a NUL answer': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'correct', reason: 'Typed wrong', answers: { note: `ok${NUL}` } }), status: 400 },
  'correction with a lone surrogate answer': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'correct', reason: 'Typed wrong', answers: { note: `ok${LONE_LOW}` } }), status: 400 },
  'correction of an answer keyed constructor': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'correct', reason: 'Typed wrong', answers: { constructor: 1 } }), status: 400 },
  'correction whose answers are a list': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'correct', reason: 'Typed wrong', answers: [1, 2] }), status: 400 },
  'review action that does not exist': { as: 'coordinator', method: 'POST', path: c => `/api/review/visits/${c.visitId}`, body: review({ action: 'delete' }), status: 400 },
  // CSV import (all-or-nothing: one bad row refuses the file)
  'import cell with a lone surrogate': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(c => csvOf([`F-1,${c.villageCode},yes,2,5,fine`, `F-2,${c.villageCode},no,1,4,bad ${LONE_HIGH}`])), status: 422 },
  'import cell with NUL': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(c => csvOf([`F-1,${c.villageCode},yes,2,5,bad${NUL}`])), status: 422 },
  'import farm code that is a formula': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(c => csvOf([`=cmd|' /C calc'!A0,${c.villageCode},yes,2,5,fine`])), status: 422 },
  'import with U+FFFD (a file read in the wrong encoding)': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(c => csvOf([`F-1,${c.villageCode},yes,2,5,Mbo\uFFFDni`])), status: 400 },
  'import mapping a question keyed constructor': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(c => csvOf([`F-1,${c.villageCode},yes,2,5,x`]), { mapping: { farmCode: 'farm', villageCode: 'village', questions: { constructor: 'note' } } }), status: 400 },
  'import file name with NUL': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(c => csvOf([`F-1,${c.villageCode},yes,2,5,x`]), { fileName: `past${NUL}.csv` }), status: 400 },
  'import file name with markup and a newline': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(c => csvOf([`F-1,${c.villageCode},yes,2,5,x`]), { fileName: `${XSS}\n.csv` }), status: 400 },
  'import of an empty file': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(() => ''), status: 400 },
  'import of a header only': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(() => csvOf([])), status: 400 },
  'import whose file is a number': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(() => 12 as unknown as string), status: 400 },
  'import yes-word with a control character': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports/preview`, body: importBody(c => csvOf([`F-1,${c.villageCode},yes,2,5,x`]), { yesNoWords: { yes: 'ja\u0008', no: 'nein' } }), status: 400 },
  'import mode that does not exist': { as: 'coordinator', method: 'POST', path: c => `/api/rounds/${c.round.roundId}/imports`, body: importBody(c => csvOf([`F-1,${c.villageCode},yes,2,5,x`]), { mode: 'merge' }), status: 400 },
  // People and settings
  'invitation name with NUL': { as: 'admin', method: 'POST', path: () => '/api/people/invitations', body: () => ({ email: `adv-${randomUUID().slice(0, 8)}@example.org`, role: 'coordinator', name: `Ama${NUL}` }), status: 400 },
  'invitation name with a lone surrogate': { as: 'admin', method: 'POST', path: () => '/api/people/invitations', body: () => ({ email: `adv-${randomUUID().slice(0, 8)}@example.org`, role: 'coordinator', name: `Ama ${LONE_HIGH}` }), status: 400 },
  'invitation name with markup on two lines': { as: 'admin', method: 'POST', path: () => '/api/people/invitations', body: () => ({ email: `adv-${randomUUID().slice(0, 8)}@example.org`, role: 'coordinator', name: `Ama\n${XSS}` }), status: 400 },
  'invitation e-mail with markup': { as: 'admin', method: 'POST', path: () => '/api/people/invitations', body: () => ({ email: '<script>@example.org', role: 'coordinator' }), status: 400 },
  'invitation e-mail with a header break': { as: 'admin', method: 'POST', path: () => '/api/people/invitations', body: () => ({ email: 'a@example.org\r\nBcc: all@example.org', role: 'coordinator' }), status: 400 },
  'invitation role that does not exist': { as: 'admin', method: 'POST', path: () => '/api/people/invitations', body: () => ({ email: `adv-${randomUUID().slice(0, 8)}@example.org`, role: 'superuser' }), status: 400 },
  'settings name with a lone surrogate': { as: 'admin', method: 'PUT', path: () => '/api/settings', body: settings({ name: `Demo ${LONE_HIGH}` }), status: 400 },
  'settings funder name with NUL': { as: 'admin', method: 'PUT', path: () => '/api/settings', body: settings({ funderOrganisations: [{ name: `Fund${NUL}`, emailDomain: 'fund.example' }] }), status: 400 },
  'settings minimum as text': { as: 'admin', method: 'PUT', path: () => '/api/settings', body: settings({ minVisitsForFunders: '9' }), status: 400 },
  'settings funder domain that is a script URL': { as: 'admin', method: 'PUT', path: () => '/api/settings', body: settings({ funderOrganisations: [{ name: 'Fund', emailDomain: 'javascript:alert(1)' }] }), status: 400 },
  'settings with 51 funders': { as: 'admin', method: 'PUT', path: () => '/api/settings', body: settings({ funderOrganisations: Array.from({ length: 51 }, (_, i) => ({ name: `F${i}`, emailDomain: `f${i}.example` })) }), status: 400 },
  'settings nested 3,000 deep': { as: 'admin', method: 'PUT', path: () => '/api/settings', body: settings({ funderOrganisations: nested(3000) }), status: 413 },
  'erasure reason with NUL': { as: 'coordinator', method: 'POST', path: () => '/api/privacy/erasures', body: () => ({ farmCode: 'F-0001', reason: `Consent withdrawn${NUL}` }), status: 400 },
  'erasure of a farm code with a formula': { as: 'coordinator', method: 'POST', path: () => '/api/privacy/erasures', body: () => ({ farmCode: '=cmd|x', reason: 'Consent withdrawn' }), status: 400 },
  'erasure reason of 10,000 characters': { as: 'coordinator', method: 'POST', path: () => '/api/privacy/erasures', body: () => ({ farmCode: 'F-0001', reason: BIG }), status: 400 },
  'retention days as text': { as: 'admin', method: 'PUT', path: () => '/api/settings/privacy', body: () => ({ keepAnswersAfterErasure: false, retentionDays: { photos: '30', gps: null, names: null } }), status: 400 },
  'retention of a million days': { as: 'admin', method: 'PUT', path: () => '/api/settings/privacy', body: () => ({ keepAnswersAfterErasure: false, retentionDays: { photos: 1e6, gps: null, names: null } }), status: 400 },
  'new password with NUL': { as: 'funder', method: 'POST', path: () => '/api/me/password', body: () => ({ currentPassword: 'whatever-it-is', newPassword: `long enough${NUL}password` }), status: 400 },
  // Models
  'scenario name with NUL': { as: 'coordinator', method: 'POST', path: () => '/api/models/999999/scenarios', body: () => ({ scenarios: [{ name: `All${NUL}`, covariate: 'farm_size_ha', shift: 1 }] }), status: 400 },
  'scenario name with a lone surrogate': { as: 'coordinator', method: 'POST', path: () => '/api/models/999999/scenarios', body: () => ({ scenarios: [{ name: `All ${LONE_HIGH}`, covariate: 'farm_size_ha', shift: 1 }] }), status: 400 },
  'scenario value with NUL': { as: 'coordinator', method: 'POST', path: () => '/api/models/999999/scenarios', body: () => ({ scenarios: [{ name: 'All', covariate: 'soil', set: `clay${NUL}` }] }), status: 400 },
  'publication note with a lone surrogate': { as: 'coordinator', method: 'POST', path: () => '/api/models/999999/publish', body: () => ({ note: `For planning ${LONE_LOW}` }), status: 400 },
  'publication note with NUL': { as: 'coordinator', method: 'POST', path: () => '/api/models/999999/publish', body: () => ({ note: `For planning${NUL}` }), status: 400 },
  // Public routes
  'sign-in e-mail with NUL': { as: 'anonymous', method: 'POST', path: () => '/api/auth/signin', body: () => ({ email: `coordinator${NUL}@example.org`, password: 'x' }), status: 400 },
  'forgotten-password e-mail with a lone surrogate': { as: 'anonymous', method: 'POST', path: () => '/api/auth/forgot', body: () => ({ email: `a${LONE_HIGH}@example.org` }), status: 400 },
  'new-password link with markup for a token': { as: 'anonymous', method: 'POST', path: () => '/api/auth/password', body: () => ({ token: XSS, purpose: 'invitation', password: 'long enough password', name: `Ama${NUL}` }), status: 400 }
}

async function send(c: Case): Promise<{ status: number, body: Record<string, unknown> }> {
  const client = clients.get(c.as)!
  if (c.raw) {
    const response = await fetch(`${baseUrl()}${c.path(ctx)}`, {
      method: c.method,
      headers: { 'content-type': c.type ?? 'application/json', 'cookie': client.cookieHeader(), 'x-forwarded-for': `10.77.${Math.floor(Math.random() * 250)}.${Math.floor(Math.random() * 250)}` },
      body: c.raw(ctx)
    })
    const text = await response.text()
    return { status: response.status, body: text ? JSON.parse(text) : {} }
  }
  const answer = await client.request<Record<string, unknown>>(c.method, c.path(ctx), c.body?.(ctx) ?? {})
  return { status: answer.status, body: answer.body }
}

/** A message a person can read: some words, not a server error, not a stack trace. */
function expectReadable(body: Record<string, unknown>) {
  const results = body.results as Array<{ status: string, errors?: Record<string, string> }> | undefined
  const message = String(body.message ?? '')
  expect(message.length).toBeGreaterThan(5)
  expect(message).not.toMatch(/Server Error|Internal|at \w+ \(|node_modules|Sequelize|ER_/)
  if (results) {
    expect(results.every(r => r.status === 'rejected')).toBe(true)
    for (const r of results) expect(Object.values(r.errors ?? {}).join(' ')).toMatch(/\w{3}/)
  }
}

describe('hostile input gets a clear 4xx and writes nothing', () => {
  it('has at least 80 cases', () => {
    expect(Object.keys(CASES).length + Object.keys(PHOTOS).length).toBeGreaterThanOrEqual(80)
  })

  it.each(Object.entries(CASES))('%s', async (_name, c) => {
    const before = await dataFingerprint()
    const answer = await send(c)
    expect(answer.status, JSON.stringify(answer.body).slice(0, 300)).toBe(c.status)
    expectReadable(answer.body)
    expect(await dataFingerprint()).toEqual(before)
  })

  it.each(Object.entries(PHOTOS))('photo: %s', async (name, { bytes, type }) => {
    const before = await dataFingerprint()
    const id = randomUUID()
    const sha256 = createHash('sha256').update(bytes).digest('hex')
    const response = await fetch(`${baseUrl()}/api/photos/${id}?visitId=${ctx.visitId}&sha256=${sha256}`, {
      method: 'PUT',
      headers: { 'content-type': type, 'cookie': clients.get('enumerator')!.cookieHeader(), 'x-forwarded-for': '10.77.1.1' },
      body: bytes
    })
    expect(response.status).toBe(PHOTO_STATUS[name])
    expectReadable(await response.json())
    expect(await dataFingerprint()).toEqual(before)
  })
})

describe('one bad record never blocks the rest of a batch', () => {
  it('stores the good visits and rejects the bad one with its field error', async () => {
    const good = [makeVisit(ctx.round), makeVisit(ctx.round, {}, { note: 'Weevils in the store 🌽' })]
    const bad = makeVisit(ctx.round, {}, { note: `Harvest ${LONE_HIGH} late` })
    const answer = await clients.get('enumerator')!.post<{ results: Array<{ id: string, status: string, errors?: Record<string, string> }> }>(
      '/api/sync/visits', { visits: [good[0], bad, good[1]] })
    expect(answer.status).toBe(200)
    expect(answer.body.results.map(r => r.status)).toEqual(['stored', 'rejected', 'stored'])
    expect(answer.body.results[1]!.errors!['answers.note']).toMatch(/cannot be stored/)
    expect(await Visit.count({ where: { id: good.map(g => g.id) } })).toBe(2)
    expect(await Visit.findByPk(bad.id)).toBeNull()
    // Text outside the Basic Multilingual Plane is stored as typed, not as "?".
    expect((await Visit.findByPk(good[1]!.id))!.answers.note).toBe('Weevils in the store 🌽')
  })

  it('keeps every table in utf8mb4, and every connection too', async () => {
    const db = testDatabase()
    const tables = await db.query<{ name: string, collation: string }>(
      'SELECT TABLE_NAME AS name, TABLE_COLLATION AS collation FROM information_schema.TABLES WHERE TABLE_SCHEMA = DATABASE() AND TABLE_TYPE = \'BASE TABLE\'',
      { type: 'SELECT' as never })
    expect(tables.length).toBeGreaterThan(10)
    expect(tables.filter(t => !t.collation.startsWith('utf8mb4'))).toEqual([])
    const [connection] = await db.query<{ charset: string }>('SELECT @@character_set_connection AS charset', { type: 'SELECT' as never })
    expect(connection!.charset).toBe('utf8mb4')
  })
})

describe('spreadsheet formulas in stored text come out neutralised in every CSV', () => {
  it('visit export, data dictionary and the rejected rows of an import', async () => {
    const coordinator = clients.get('coordinator')!
    const formula = '=HYPERLINK("http://x.example/?leak","open")'
    const csv = [
      'farm,village,adopted,farm_size_ha,household_size,note',
      `CSV-1,${ctx.villageCode},yes,2,5,"${formula.replace(/"/g, '""')}"`,
      `CSV-2,${ctx.villageCode},no,1,4,@SUM(1+1)`,
      `CSV-3,${ctx.villageCode},no,-1,4,+cmd|' /C calc'!A0`,
      `CSV-4,${ctx.villageCode},yes,3,6,- a note that starts with a dash`
    ].join('\r\n')
    const imported = await coordinator.post<{ importedCount: number, rejectedCsv: string }>(`/api/rounds/${ctx.round.roundId}/imports`, {
      csv, fileName: 'formulas.csv', mode: 'valid-only',
      mapping: { farmCode: 'farm', villageCode: 'village', questions: { adopted: 'adopted', farm_size_ha: 'farm_size_ha', household_size: 'household_size', note: 'note' } }
    })
    expect(imported.status).toBe(200)
    expect(imported.body.importedCount).toBe(3)
    // The rejected row (a farm size below 0) keeps its negative number, and its formula cell is neutralised.
    expect(imported.body.rejectedCsv.split('\n')[1]).toMatch(/^CSV-3,[^,]+,no,-1,4,'\+cmd\|' \/C calc'!A0,/)

    // The identifying export carries free-text answers (the pseudonymised one leaves them out).
    const exported = await coordinator.get<string>(`/api/rounds/${ctx.round.roundId}/export?part=visits&identifying=1&reason=${encodeURIComponent('Checking formula cells in text answers')}`)
    expect(exported.status).toBe(200)
    const cells = exported.body.split('\n').filter(l => l.startsWith('"') || /^[0-9a-f-]{36},/.test(l)).join('\n')
    expect(cells).toContain(`"'${formula.replace(/"/g, '""')}"`)
    expect(cells).toContain('\'@SUM(1+1)')
    expect(cells).toContain('\'- a note that starts with a dash')
    // No cell of the export starts with a formula character.
    for (const line of exported.body.split('\n').filter(l => l && !l.startsWith('#'))) {
      for (const cell of line.match(/("([^"]|"")*"|[^,]*)(,|$)/g) ?? []) {
        const text = cell.replace(/,$/, '').replace(/^"|"$/g, '')
        if (/^[=+@\t\r]/.test(text) || (/^-/.test(text) && !/^-\d/.test(text))) throw new Error(`live formula cell: ${text}`)
      }
    }
  })
})
