import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { QuestionnaireVersion, User, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { rectangular } from '../support/csv'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { type Client, demoUser, freshClient } from '../support/server'

// Languages through the real routes and MariaDB: a save with a missing translation is refused with the builder's
// message and writes nothing; a complete one round-trips as a new version and reaches the tablet's setup; visits keep
// codes whatever the language, the export writes codes, and the version before languages still takes and corrects visits.

let coordinator: Client
let enumerator: Client
let round: TestRound

const SOIL = { key: 'soil', label: 'Main soil', type: 'choice', options: [{ value: 'sandy', label: 'Sandy' }, { value: 'clay', label: 'Clay' }] }
const LANGUAGES = [{ code: 'en', name: 'English' }, { code: 'qaa', name: 'Tolani' }]
const TOLANI = {
  adopted: { label: 'Mbeno sorilo?', help: 'Eya ko sorila.' },
  farm_size_ha: { label: 'Wukali ya mbeno', unit: 'hk' },
  household_size: { label: 'Wantu ya nyumba' },
  group_member: { label: 'Mwana wa kikundi?' },
  soil: { label: 'Tandu', options: { sandy: 'Tandu sawi', clay: 'Tandu loma' } }
}
const CHECK = { question: 'household_size', test: 'at_most', against: { value: 25 }, message: 'More than 25 people: check with the farmer.', messages: { qaa: 'Wantu kupita 25: uliza tena.' } }

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  enumerator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  await enumerator.signIn(demoUser('enumerator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id, [SOIL])
})
afterAll(closeTestDatabase)

interface Detail { questionnaire: { id: number, number: number, definition: Record<string, unknown> & { questions: Array<Record<string, unknown>> } } }
const current = async () => (await coordinator.get<Detail>(`/api/rounds/${round.roundId}`)).body.questionnaire
const save = (body: unknown) => coordinator.request<{ message: string, data?: { fieldErrors: Record<string, string> }, number?: number }>('PUT', `/api/rounds/${round.roundId}/questionnaire`, body)
const sync = (visits: unknown[]) => enumerator.post<SyncBody>('/api/sync/visits', { visits })

describe('saving a questionnaire in two languages', () => {
  it('refuses a missing translation with the message the builder shows, and writes nothing', async () => {
    const before = await current()
    const versions = await QuestionnaireVersion.count({ where: { roundId: round.roundId } })
    const { farm_size_ha: _gone, ...partial } = TOLANI
    const answer = await save({ questions: before.definition.questions, checks: [CHECK], languages: LANGUAGES, translations: { qaa: { ...partial, farm_size_ha: { label: 'Wukali ya mbeno' } } } })
    expect(answer.status).toBe(400)
    expect(answer.body.data!.fieldErrors).toEqual({ 'translations.qaa.farm_size_ha.unit': 'Tolani (qaa): no unit for "Farm size" ("ha")' })
    expect(answer.body.message).toContain('Tolani (qaa): no unit for "Farm size" ("ha")')
    const noMessage = await save({ questions: before.definition.questions, checks: [{ ...CHECK, messages: undefined }], languages: LANGUAGES, translations: { qaa: TOLANI } })
    expect(noMessage.status).toBe(400)
    expect(noMessage.body.data!.fieldErrors).toEqual({ 'checks.0.messages.qaa': 'Tolani (qaa): no message for check 1 ("More than 25 people: check with the farmer.")' })
    const badTag = await save({ questions: before.definition.questions, languages: [LANGUAGES[0], { code: 'Tolani!', name: 'Tolani' }] })
    expect(badTag.status).toBe(400)
    expect(badTag.body.data!.fieldErrors['languages.1.code']).toMatch(/language tag/)
    expect(await QuestionnaireVersion.count({ where: { roundId: round.roundId } })).toBe(versions)
    expect((await current()).number).toBe(before.number)
  })

  it('stores a complete one as a new version that round-trips and reaches the tablet', async () => {
    const before = await current()
    const answer = await save({ questions: before.definition.questions, checks: [CHECK], languages: LANGUAGES, translations: { qaa: TOLANI } })
    expect(answer.status).toBe(200)
    expect(answer.body.number).toBe(before.number + 1)
    const after = await current()
    expect(after.definition.languages).toEqual(LANGUAGES)
    expect(after.definition.translations).toEqual({ qaa: TOLANI })
    expect(after.definition.checks).toEqual([CHECK])
    expect(after.definition.questions).toEqual(before.definition.questions)
    const setup = await enumerator.get<{ questionnaires: Array<{ id: number, definition: Record<string, unknown> }> }>('/api/field/setup')
    const onTablet = setup.body.questionnaires.find(q => q.id === after.id)!
    expect(onTablet.definition.translations).toEqual({ qaa: TOLANI })
    expect(onTablet.definition.languages).toEqual(LANGUAGES)
    // The earlier version, saved before languages, is still there without them.
    const older = setup.body.questionnaires.find(q => q.id === round.versionId)!
    expect(older.definition.languages).toBeUndefined()
  })
})

describe('visits, exports and corrections keep codes', () => {
  it('stores codes from both versions, exports codes, and corrects a visit of the version without languages', async () => {
    const latest = await current()
    const onNew = makeVisit(round, { questionnaireVersionId: latest.id }, { soil: 'clay', group_member: true })
    const onOld = makeVisit(round, {}, { soil: 'sandy' })
    const tooMany = makeVisit(round, { questionnaireVersionId: latest.id }, { household_size: 28 })
    const answer = await sync([onNew, onOld, tooMany])
    expect(answer.body.results.map(r => r.status)).toEqual(['stored', 'stored', 'rejected'])
    // The server speaks the main language: the check's own message.
    expect(answer.body.results[2]!.errors).toEqual({ 'answers.household_size': 'More than 25 people: check with the farmer.' })
    expect((await Visit.findByPk(onNew.id))!.answers.soil).toBe('clay')

    const corrected = await coordinator.post(`/api/review/visits/${onOld.id}`, { action: 'correct', reason: 'The farmer corrected the soil', answers: { soil: 'clay' } })
    expect(corrected.status).toBe(200)
    expect((await Visit.findByPk(onOld.id))!.answers.soil).toBe('clay')
    for (const id of [onNew.id, onOld.id]) expect((await coordinator.post(`/api/review/visits/${id}`, { action: 'accept' })).status).toBe(200)

    const csv = await coordinator.get<string>(`/api/rounds/${round.roundId}/export?part=visits`)
    expect(csv.status).toBe(200)
    const [header, ...rows] = rectangular(csv.body)
    const soil = header!.indexOf('soil')
    expect(soil).toBeGreaterThan(-1)
    expect(rows.map(r => r[soil]).sort()).toEqual(['clay', 'clay'])
    expect(csv.body).not.toContain('Tandu')
  })
})

describe('copying a round', () => {
  it('copies the languages and translations, but not the old adoption question\'s', async () => {
    const copy = await coordinator.post<{ id: number }>('/api/rounds', { name: `Copy of ${round.roundId}`, technology: 'another seed', season: '2027', copyFromRoundId: round.roundId })
    expect(copy.status).toBe(200)
    const detail = (await coordinator.get<Detail>(`/api/rounds/${copy.body.id}`)).body.questionnaire
    expect(detail.definition.languages).toEqual(LANGUAGES)
    const { adopted: _old, ...rest } = TOLANI
    expect(detail.definition.translations).toEqual({ qaa: rest })
    // Saving it as it is names the one missing text: the new adoption question.
    const saved = await coordinator.request<{ data: { fieldErrors: Record<string, string> } }>('PUT', `/api/rounds/${copy.body.id}/questionnaire`, { questions: detail.definition.questions, checks: detail.definition.checks, languages: LANGUAGES, translations: detail.definition.translations })
    expect(saved.status).toBe(400)
    expect(Object.keys(saved.body.data.fieldErrors).sort()).toEqual(['translations.qaa.adopted.help', 'translations.qaa.adopted.label'])
  })
})
