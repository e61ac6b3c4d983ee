import type { H3Event } from 'h3'
import { Op, literal, type Order, type WhereOptions } from 'sequelize'
import type { Page } from '#shared/types/listing'
import type { ReviewRow, VisitCorrection } from '#shared/types/field'
import type { BulkAccept, ReviewAction, ReviewQuery } from '#shared/utils/schemas/review'
import { answersSchemaFor, adoptedOf, notAskedKeys } from '#shared/utils/schemas/visit'
import { AuditEntry, Photo, QuestionnaireVersion, Round, User, Village, Visit } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'
import { erasedFarmCodes } from './erasure'
import { linkVisitsToFarms } from './farm-register'
import { edgeValues } from './visit-flags'

const SORTS: Record<ReviewQuery['sort'], (dir: 'ASC' | 'DESC') => Order> = {
  savedAt: dir => [['savedAt', dir], ['id', 'ASC']],
  farmCode: dir => [['farmCode', dir], ['id', 'ASC']],
  reviewState: dir => [['reviewState', dir], ['savedAt', 'DESC']],
  village: dir => [[{ model: Village, as: 'village' }, 'name', dir], ['savedAt', 'DESC']],
  enumerator: dir => [[{ model: User, as: 'enumerator' }, 'name', dir], ['savedAt', 'DESC']]
}

export async function listReviewVisits(organisationId: number, q: ReviewQuery): Promise<Page<ReviewRow>> {
  const where: WhereOptions<Visit> = { organisationId }
  if (q.roundId) Object.assign(where, { roundId: q.roundId })
  if (q.villageId) Object.assign(where, { villageId: q.villageId })
  if (q.enumeratorId) Object.assign(where, { enumeratorId: q.enumeratorId })
  if (q.state) Object.assign(where, { reviewState: q.state })
  const range: Record<symbol, Date> = {}
  if (q.from) range[Op.gte] = new Date(`${q.from}T00:00:00Z`)
  if (q.to) range[Op.lt] = new Date(Date.parse(`${q.to}T00:00:00Z`) + 86_400_000)
  if (q.from || q.to) Object.assign(where, { savedAt: range })
  if (q.flagged === '1') Object.assign(where, { [Op.and]: [literal('JSON_LENGTH(`Visit`.`flags`) > 0')] })
  if (q.flagged === '0') Object.assign(where, { [Op.and]: [literal('JSON_LENGTH(`Visit`.`flags`) = 0')] })
  if (q.farm) Object.assign(where, { farmCode: { [Op.substring]: q.farm } })
  const { rows, count } = await Visit.findAndCountAll({
    where,
    include: [
      { model: Village, as: 'village', attributes: ['name'] },
      { model: User, as: 'enumerator', attributes: ['name'] }
    ],
    order: SORTS[q.sort](q.dir === 'asc' ? 'ASC' : 'DESC'),
    limit: q.pageSize,
    offset: (q.page - 1) * q.pageSize
  })
  const [photos, corrections] = await Promise.all([
    Photo.findAll({ where: { visitId: rows.map(r => r.id), status: 'stored' }, attributes: ['id', 'visitId'], order: [['createdAt', 'ASC']] }),
    correctionsOf(organisationId, rows.map(r => r.id))
  ])
  return {
    items: rows.map(v => reviewRowOf(v, photos.filter(p => p.visitId === v.id).map(p => p.id), corrections.get(v.id) ?? [])),
    total: count,
    page: q.page,
    pageSize: q.pageSize
  }
}

/** The corrections of these visits, read back from the audit log (which keeps each changed answer's old value). */
async function correctionsOf(organisationId: number, visitIds: string[]): Promise<Map<string, VisitCorrection[]>> {
  const byVisit = new Map<string, VisitCorrection[]>()
  if (!visitIds.length) return byVisit
  const entries = await AuditEntry.findAll({ where: { organisationId, action: 'visit.correct', entityType: 'visit', entityId: visitIds }, order: [['id', 'ASC']] })
  const people = await User.findAll({ where: { id: [...new Set(entries.map(e => e.actorUserId ?? 0))], organisationId }, attributes: ['id', 'name'] })
  for (const e of entries) {
    const details = (e.details ?? {}) as { reason?: string, before?: Record<string, unknown>, after?: Record<string, unknown> }
    const keys = Object.keys({ ...details.before, ...details.after })
    const list = byVisit.get(e.entityId!) ?? []
    list.push({
      at: e.createdAt.toISOString(),
      by: people.find(p => p.id === e.actorUserId)?.name ?? e.actorEmail ?? 'Someone no longer in the organisation',
      reason: details.reason ?? '',
      changes: keys.map(key => ({ key, before: details.before?.[key] ?? null, after: details.after?.[key] ?? null }))
    })
    byVisit.set(e.entityId!, list)
  }
  return byVisit
}

function reviewRowOf(v: Visit, photoIds: string[], corrections: VisitCorrection[]): ReviewRow {
  const joined = v as Visit & { village?: Village, enumerator?: User }
  return {
    id: v.id,
    roundId: v.roundId,
    villageId: v.villageId,
    villageName: joined.village?.name ?? '',
    enumeratorId: v.enumeratorId,
    enumeratorName: joined.enumerator?.name ?? '',
    farmCode: v.farmCode,
    savedAt: v.savedAt.toISOString(),
    reviewState: v.reviewState,
    reviewReason: v.reviewReason,
    flags: v.flags as Record<string, unknown>,
    answers: v.answers,
    notAsked: v.notAsked ?? [],
    questionnaireVersionId: v.questionnaireVersionId,
    lat: v.lat,
    lon: v.lon,
    accuracyM: v.accuracyM,
    manualLocationReason: v.manualLocationReason,
    version: v.version,
    photoIds,
    corrections
  }
}

/** Accept, send back or correct one visit; each bumps its version so a stale device edit turns into a conflict. */
export async function reviewVisit(event: H3Event, user: SignedInUser, id: string, action: ReviewAction) {
  return database().transaction(async (transaction) => {
    const visit = await Visit.findOne({ where: { id, organisationId: user.organisationId }, transaction, lock: transaction.LOCK.UPDATE })
    if (!visit) throw createError({ statusCode: 404, message: 'No such visit.' })
    const base = { action: `visit.${action.action}`, entityType: 'visit', entityId: id }
    // Every review action can change the set or the content of accepted visits: models see it as a new data version.
    await bumpDataVersion(visit.roundId, transaction)
    if (action.action === 'accept') {
      await visit.update({ reviewState: 'accepted', reviewReason: null, version: visit.version + 1 }, { transaction })
      await audit(event, user, base, transaction)
    }
    else if (action.action === 'send_back') {
      await visit.update({ reviewState: 'sent_back', reviewReason: action.reason, version: visit.version + 1 }, { transaction })
      await audit(event, user, { ...base, details: { reason: action.reason } }, transaction)
    }
    else if (action.action === 'farm_code') {
      const before = visit.farmCode
      if (before === action.farmCode) throw createError({ statusCode: 400, message: 'farmCode: This is the farm code the visit has already.', data: { fieldErrors: { farmCode: 'This is the farm code the visit has already.' } } })
      if ((await erasedFarmCodes(user.organisationId, [action.farmCode])).size) throw createError({ statusCode: 409, message: 'This farm\'s personal data were erased at the farmer\'s request: its code cannot be used again.' })
      await visit.update({ farmCode: action.farmCode, version: visit.version + 1 }, { transaction })
      await linkVisitsToFarms({ organisationId: user.organisationId, roundIds: [visit.roundId], farmCodes: [action.farmCode] }, transaction)
      await audit(event, user, { ...base, details: { reason: action.reason, before: { farmCode: before }, after: { farmCode: action.farmCode } } }, transaction)
    }
    else {
      const version = await QuestionnaireVersion.findByPk(visit.questionnaireVersionId, { transaction })
      const merged = { ...visit.answers, ...action.answers }
      const parsed = answersSchemaFor(version!.definition.questions, version!.definition.checks, version!.definition.groups).safeParse(merged)
      if (!parsed.success) {
        const fieldErrors = fieldErrorsOf(parsed.error)
        throw createError({ statusCode: 400, message: summaryOf(fieldErrors), data: { fieldErrors } })
      }
      // The audit entry keeps the old values of every changed answer.
      const changed = Object.keys(action.answers).filter(k => JSON.stringify(visit.answers[k]) !== JSON.stringify(parsed.data[k]))
      const before = Object.fromEntries(changed.map(k => [k, visit.answers[k] ?? null]))
      const after = Object.fromEntries(changed.map(k => [k, parsed.data[k] ?? null]))
      // A corrected answer may move into or out of the edge of its range.
      const edges = edgeValues(version!.definition.questions, parsed.data)
      const { edgeValues: _old, ...otherFlags } = visit.flags
      const flags = edges.length ? { ...otherFlags, edgeValues: edges } : otherFlags
      // A correction can change which questions the conditions ask: "not asked" follows the corrected answers.
      const notAsked = notAskedKeys(version!.definition.questions, parsed.data)
      await visit.update({ answers: parsed.data, notAsked: notAsked.length ? notAsked : null, adopted: adoptedOf(parsed.data), flags, version: visit.version + 1 }, { transaction })
      await audit(event, user, { ...base, details: { reason: action.reason, before, after } }, transaction)
    }
    return { id, reviewState: visit.reviewState, version: visit.version }
  })
}

/**
 * Accepts, in one transaction, every unflagged visit of a round that is still to review (within the filters).
 * The coordinator confirmed a count: if the list changed since (new visits synced, another reviewer), nothing is
 * written and the answer says so, so a confirmation never covers visits nobody saw counted.
 */
export async function acceptUnflagged(event: H3Event, user: SignedInUser, input: BulkAccept) {
  return database().transaction(async (transaction) => {
    const round = await Round.findOne({ where: { id: input.roundId, organisationId: user.organisationId }, transaction })
    if (!round) throw createError({ statusCode: 404, message: 'No such round.' })
    const where: WhereOptions<Visit> = { organisationId: user.organisationId, roundId: round.id, reviewState: 'received', [Op.and]: [literal('JSON_LENGTH(`Visit`.`flags`) = 0')] }
    if (input.villageId) Object.assign(where, { villageId: input.villageId })
    if (input.enumeratorId) Object.assign(where, { enumeratorId: input.enumeratorId })
    if (input.farm) Object.assign(where, { farmCode: { [Op.substring]: input.farm } })
    const visits = await Visit.findAll({ where, attributes: ['id'], transaction, lock: transaction.LOCK.UPDATE })
    if (visits.length !== input.count) {
      throw createError({ statusCode: 409, message: `The list changed since you looked: ${visits.length} unflagged visits are waiting now, not ${input.count}. Nothing was accepted; check the list and try again.` })
    }
    await Visit.update({ reviewState: 'accepted', reviewReason: null, version: literal('version + 1') as unknown as number }, { where: { id: visits.map(v => v.id) }, transaction })
    await audit(event, user, { action: 'visit.bulk_accept', entityType: 'round', entityId: round.id, details: { name: round.name, count: visits.length } }, transaction)
    return { accepted: visits.length }
  })
}
