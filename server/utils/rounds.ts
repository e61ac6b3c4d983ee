import type { H3Event } from 'h3'
import { fn, col } from 'sequelize'
import type { RoundDetail, RoundRow, VillageProgress, VillageRow } from '#shared/types/field'
import type { AnswerCheck } from '#shared/utils/schemas/checks'
import { OUTCOME_KEY, type Question, type QuestionGroup, questionnaireDefinitionSchema, withOutcomeQuestion } from '#shared/utils/schemas/questionnaire'
import type { RoundCreate, RoundPatch, VillageCreate } from '#shared/utils/schemas/round'
import { Assignment, QuestionnaireVersion, Round, RoundVillage, User, Village, Visit } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'

export async function findRound(organisationId: number, id: number) {
  const round = await Round.findOne({ where: { id, organisationId } })
  if (!round) throw createError({ statusCode: 404, message: 'No such round.' })
  return round
}

export async function listRounds(organisationId: number): Promise<RoundRow[]> {
  const rounds = await Round.findAll({ where: { organisationId }, order: [['id', 'DESC']] })
  const ids = rounds.map(r => r.id)
  const [villages, visits, versions] = await Promise.all([
    RoundVillage.findAll({ where: { roundId: ids }, attributes: ['roundId', [fn('COUNT', col('village_id')), 'n']], group: ['roundId'], raw: true }),
    Visit.findAll({ where: { roundId: ids }, attributes: ['roundId', [fn('COUNT', col('id')), 'n']], group: ['roundId'], raw: true }),
    QuestionnaireVersion.findAll({ where: { id: rounds.map(r => r.currentVersionId ?? 0) }, attributes: ['id', 'number'] })
  ])
  const count = (rows: unknown[], id: number) => Number((rows as Array<{ roundId: number, n: number }>).find(r => r.roundId === id)?.n ?? 0)
  return rounds.map(r => ({
    id: r.id,
    name: r.name,
    technology: r.technology,
    season: r.season,
    status: r.status,
    villageCount: count(villages, r.id),
    visitCount: count(visits, r.id),
    versionNumber: versions.find(v => v.id === r.currentVersionId)?.number ?? null
  }))
}

export async function roundDetail(organisationId: number, id: number): Promise<RoundDetail> {
  const round = await findRound(organisationId, id)
  const [row] = (await listRounds(organisationId)).filter(r => r.id === id)
  const links = await RoundVillage.findAll({ where: { roundId: id } })
  const [versions, villages, assignments, enumerators, counts] = await Promise.all([
    QuestionnaireVersion.findAll({ where: { roundId: id }, order: [['number', 'ASC']] }),
    Village.findAll({ where: { id: links.map(l => l.villageId), organisationId }, order: [['name', 'ASC']] }),
    Assignment.findAll({ where: { roundId: id }, attributes: ['userId', 'villageId'] }),
    User.findAll({ where: { organisationId, role: 'enumerator', active: true }, attributes: ['id', 'name'], order: [['name', 'ASC']] }),
    Visit.findAll({ where: { roundId: id }, attributes: ['villageId', 'reviewState', [fn('COUNT', col('id')), 'n']], group: ['villageId', 'reviewState'], raw: true })
  ])
  const dtos = versions.map(v => ({ id: v.id, roundId: v.roundId, number: v.number, definition: v.definition }))
  return {
    ...row!,
    targetVisitsPerVillage: round.targetVisitsPerVillage ?? null,
    progress: progressOf(counts as unknown as Array<{ villageId: number, reviewState: string, n: number }>),
    questionnaire: dtos.find(v => v.id === round.currentVersionId) ?? null,
    questionnaires: dtos,
    villages: villages.map(villageRowOf),
    assignments: assignments.map(a => ({ userId: a.userId, villageId: a.villageId })),
    enumerators: enumerators.map(u => ({ id: u.id, name: u.name }))
  }
}

function progressOf(counts: Array<{ villageId: number, reviewState: string, n: number }>): VillageProgress[] {
  const byVillage = new Map<number, VillageProgress>()
  for (const c of counts) {
    const p = byVillage.get(c.villageId) ?? { villageId: c.villageId, received: 0, accepted: 0, sentBack: 0 }
    if (c.reviewState === 'accepted') p.accepted += Number(c.n)
    else if (c.reviewState === 'sent_back') p.sentBack += Number(c.n)
    else p.received += Number(c.n)
    byVillage.set(c.villageId, p)
  }
  return [...byVillage.values()]
}

export function villageRowOf(v: Village): VillageRow {
  return { id: v.id, code: v.code, name: v.name, district: v.district, centreLat: v.centreLat, centreLon: v.centreLon, hasBoundary: v.boundary !== null }
}

export async function createRound(event: H3Event, user: SignedInUser, input: RoundCreate) {
  return database().transaction(async (transaction) => {
    const { copyFromRoundId, ...fields } = input
    let copied: Question[] = []
    let copiedChecks: AnswerCheck[] = []
    let copiedTexts: LanguageTexts = {}
    let copiedGroups: QuestionGroup[] = []
    if (copyFromRoundId) {
      // A copy of the earlier round's current questionnaire; its adoption question is asked about the new technology.
      const source = await findRound(user.organisationId, copyFromRoundId)
      const version = source.currentVersionId ? await QuestionnaireVersion.findByPk(source.currentVersionId, { transaction }) : null
      const earlier = questionnaireDefinitionSchema.parse(version?.definition ?? { questions: [] })
      copied = earlier.questions.filter(q => q.key !== OUTCOME_KEY)
      copiedChecks = earlier.checks ?? []
      copiedTexts = copiedLanguageTexts(earlier)
      copiedGroups = earlier.groups ?? []
    }
    const round = await Round.create({ ...fields, organisationId: user.organisationId, status: 'draft', currentVersionId: null }, { transaction })
    const definition = { questions: withOutcomeQuestion(copied, fields.technology), ...(copiedChecks.length ? { checks: copiedChecks } : {}), ...(copiedGroups.length ? { groups: copiedGroups } : {}), ...copiedTexts }
    const version = await QuestionnaireVersion.create({ roundId: round.id, number: 1, definition, frozenAt: null }, { transaction })
    await round.update({ currentVersionId: version.id }, { transaction })
    await audit(event, user, { action: 'round.create', entityType: 'round', entityId: round.id, details: { ...fields, ...(copyFromRoundId ? { copiedFromRoundId: copyFromRoundId } : {}) } }, transaction)
    return { id: round.id }
  })
}

// Draft → open (freezes the questionnaire), open → closed (tablets stop recording), closed → open (undoes a close).
const STATUS_CHANGES: Record<string, string[]> = { draft: ['open'], open: ['closed'], closed: ['open'] }

export async function updateRound(event: H3Event, user: SignedInUser, id: number, patch: RoundPatch) {
  return database().transaction(async (transaction) => {
    const round = await findRound(user.organisationId, id)
    if (patch.status && patch.status !== round.status) {
      const from = round.status
      if (!STATUS_CHANGES[from]!.includes(patch.status)) {
        throw createError({ statusCode: 409, message: `A ${from} round cannot be ${patch.status === 'open' ? 'opened' : 'closed'}.` })
      }
      if (patch.status === 'open' && from === 'draft') {
        // Opening freezes the questionnaire: from now on every edit makes a new version.
        await QuestionnaireVersion.update({ frozenAt: new Date() }, { where: { id: round.currentVersionId!, frozenAt: null }, transaction })
      }
      // Retention periods count from the last close; a reopened round is not due for any purge.
      await round.update({ status: patch.status, closedAt: patch.status === 'closed' ? new Date() : null }, { transaction })
      const action = from === 'closed' ? 'round.reopen' : `round.${patch.status}`
      await audit(event, user, { action, entityType: 'round', entityId: id, details: { name: round.name, from, to: patch.status } }, transaction)
    }
    if (patch.targetVisitsPerVillage !== undefined && patch.targetVisitsPerVillage !== round.targetVisitsPerVillage) {
      const before = round.targetVisitsPerVillage
      await round.update({ targetVisitsPerVillage: patch.targetVisitsPerVillage }, { transaction })
      await audit(event, user, { action: 'round.target', entityType: 'round', entityId: id, details: { name: round.name, from: before, to: patch.targetVisitsPerVillage } }, transaction)
    }
    return { id, status: round.status, targetVisitsPerVillage: round.targetVisitsPerVillage }
  })
}

/** Draft: edits the one version in place. Open: saves a new frozen version. Closed: refused. */
export async function saveQuestionnaire(event: H3Event, user: SignedInUser, id: number, questions: Question[], checks: AnswerCheck[] = [], groups: QuestionGroup[] = [], texts: LanguageTexts = {}) {
  return database().transaction(async (transaction) => {
    const round = await findRound(user.organisationId, id)
    if (round.status === 'closed') throw createError({ statusCode: 409, message: 'A closed round\'s questionnaire cannot change.' })
    const parsed = questionnaireDefinitionSchema.safeParse({ questions: withOutcomeQuestion(questions, round.technology), ...(checks.length ? { checks } : {}), ...(groups.length ? { groups } : {}), ...texts })
    if (!parsed.success) throw createError({ statusCode: 400, message: summaryOf(fieldErrorsOf(parsed.error)), data: { fieldErrors: fieldErrorsOf(parsed.error) } })
    const current = await QuestionnaireVersion.findByPk(round.currentVersionId!, { transaction, lock: transaction.LOCK.UPDATE })
    let version = current!
    if (round.status === 'draft' && !current!.frozenAt) {
      await current!.update({ definition: parsed.data }, { transaction })
    }
    else {
      version = await QuestionnaireVersion.create({ roundId: id, number: current!.number + 1, definition: parsed.data, frozenAt: new Date() }, { transaction })
      await round.update({ currentVersionId: version.id }, { transaction })
    }
    await audit(event, user, { action: 'questionnaire.save', entityType: 'round', entityId: id, details: { version: version.number, questions: parsed.data.questions.length } }, transaction)
    return { id: version.id, number: version.number }
  })
}

export async function setRoundVillages(event: H3Event, user: SignedInUser, id: number, villageIds: number[]) {
  return database().transaction(async (transaction) => {
    await findRound(user.organisationId, id)
    const villages = await Village.findAll({ where: { id: villageIds, organisationId: user.organisationId }, attributes: ['id'], transaction })
    if (villages.length !== new Set(villageIds).size) throw createError({ statusCode: 400, message: 'villageIds: unknown village' })
    await RoundVillage.destroy({ where: { roundId: id }, transaction })
    await RoundVillage.bulkCreate(villages.map(v => ({ roundId: id, villageId: v.id })), { transaction })
    await audit(event, user, { action: 'round.villages', entityType: 'round', entityId: id, details: { villageIds: villages.map(v => v.id) } }, transaction)
    return { count: villages.length }
  })
}

export async function setAssignments(event: H3Event, user: SignedInUser, id: number, assignments: Array<{ userId: number, villageId: number }>) {
  return database().transaction(async (transaction) => {
    await findRound(user.organisationId, id)
    const [links, enumerators] = await Promise.all([
      RoundVillage.findAll({ where: { roundId: id }, transaction }),
      User.findAll({ where: { organisationId: user.organisationId, role: 'enumerator' }, attributes: ['id'], transaction })
    ])
    const villageIds = new Set(links.map(l => l.villageId))
    const userIds = new Set(enumerators.map(u => u.id))
    const bad = assignments.find(a => !villageIds.has(a.villageId) || !userIds.has(a.userId))
    if (bad) throw createError({ statusCode: 400, message: 'assignments: each must pair an enumerator of this organisation with a village of this round' })
    const unique = [...new Map(assignments.map(a => [`${a.userId}:${a.villageId}`, a])).values()]
    await Assignment.destroy({ where: { roundId: id }, transaction })
    await Assignment.bulkCreate(unique.map(a => ({ roundId: id, ...a })), { transaction })
    await audit(event, user, { action: 'round.assignments', entityType: 'round', entityId: id, details: { count: unique.length } }, transaction)
    return { count: unique.length }
  })
}

export async function listVillages(organisationId: number): Promise<VillageRow[]> {
  const villages = await Village.findAll({ where: { organisationId }, order: [['district', 'ASC'], ['name', 'ASC']] })
  return villages.map(villageRowOf)
}

export async function createVillage(event: H3Event, user: SignedInUser, input: VillageCreate) {
  return database().transaction(async (transaction) => {
    const clash = await Village.findOne({ where: { organisationId: user.organisationId, code: input.code }, transaction })
    if (clash) throw createError({ statusCode: 409, message: `A village with code ${input.code} exists already.` })
    const village = await Village.create({ ...input, boundary: input.boundary ?? null, organisationId: user.organisationId }, { transaction })
    await audit(event, user, { action: 'village.create', entityType: 'village', entityId: village.id, details: { code: input.code } }, transaction)
    return villageRowOf(village)
  })
}
