import { randomBytes } from 'node:crypto'
import type { H3Event } from 'h3'
import { QueryTypes, Transaction } from 'sequelize'
import type { ErasureRequest } from '#shared/utils/schemas/privacy'
import type { ErasureResult, FarmFootprint } from '#shared/types/privacy'
import { Organisation, settingsOf } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'
import { bumpDataVersion } from './data-version'
import { deleteObjects } from './object-store'
import { PERSONAL_DATA_SOURCES } from './personal-data-sources'
import { farmKeyOf } from './pseudonyms'

// Erasure on request: a farmer withdrew consent, so the farm's personal data goes from every place listed in
// personal-data-sources.ts (database rows, photo files), from the tablets that hold its visits (told at their
// next sync through erased_visits), and so from every later export. The audit entry keeps the reason, the
// counts and the opaque id, never the erased values.

interface FarmVisit { id: string, deviceKey: string, roundId: number, roundName: string, enumeratorId: number, reviewState: string, photos: number }

async function visitsOfFarm(organisationId: number, farmCode: string, transaction?: Transaction): Promise<FarmVisit[]> {
  // Erased visits carry their opaque id as farm code, so they no longer match the old code.
  return database().query<FarmVisit>(`SELECT v.id, v.device_key AS deviceKey, v.round_id AS roundId, r.name AS roundName, v.enumerator_id AS enumeratorId,
      v.review_state AS reviewState, (SELECT COUNT(*) FROM photos p WHERE p.visit_id = v.id) AS photos
    FROM visits v JOIN rounds r ON r.id = v.round_id
    WHERE v.organisation_id = ? AND v.farm_code = ? ORDER BY v.id${transaction ? ' FOR UPDATE' : ''}`,
  { replacements: [organisationId, farmCode.trim()], type: QueryTypes.SELECT, transaction })
}

/** Rows of the farm on sample lists (a listed farm may have no visit: refused, nobody at home, not reached yet). */
async function listedRowsOfFarm(organisationId: number, farmCode: string, transaction?: Transaction): Promise<number> {
  const [row] = await database().query<{ n: number }>(`SELECT COUNT(*) AS n FROM sample_farms WHERE organisation_id = ? AND farm_code = ?${transaction ? ' FOR UPDATE' : ''}`,
    { replacements: [organisationId, farmCode.trim()], type: QueryTypes.SELECT, transaction })
  return Number(row?.n ?? 0)
}

/** Where a farm's data lives, shown before the coordinator confirms an erasure. */
export async function farmFootprint(organisationId: number, farmCode: string): Promise<FarmFootprint> {
  const visits = await visitsOfFarm(organisationId, farmCode)
  const [erased] = await database().query<{ opaqueId: string, createdAt: Date }>(
    'SELECT opaque_id AS opaqueId, created_at AS createdAt FROM erasures WHERE organisation_id = ? AND farm_key = ? ORDER BY id DESC LIMIT 1',
    { replacements: [organisationId, farmKeyOf(organisationId, farmCode)], type: QueryTypes.SELECT })
  const rounds = new Map<number, { roundId: number, roundName: string, visits: number, accepted: number }>()
  for (const v of visits) {
    const row = rounds.get(v.roundId) ?? { roundId: v.roundId, roundName: v.roundName, visits: 0, accepted: 0 }
    row.visits++
    if (v.reviewState === 'accepted') row.accepted++
    rounds.set(v.roundId, row)
  }
  return {
    farmCode: farmCode.trim(),
    visits: visits.length,
    listed: await listedRowsOfFarm(organisationId, farmCode),
    photos: visits.reduce((n, v) => n + Number(v.photos), 0),
    tablets: new Set(visits.map(v => v.enumeratorId)).size,
    rounds: [...rounds.values()],
    erasedBefore: erased ? { opaqueId: erased.opaqueId, at: new Date(erased.createdAt).toISOString() } : null,
    sources: PERSONAL_DATA_SOURCES.map(s => s.label)
  }
}

/** An id that stands for the farm from now on: random, so nothing leads back from it to the farm code. */
function opaqueId(): string {
  return `E-${randomBytes(6).toString('hex')}`
}

export async function eraseFarm(event: H3Event, user: SignedInUser, request: ErasureRequest): Promise<ErasureResult> {
  const organisation = await Organisation.findByPk(user.organisationId)
  if (!organisation) throw createError({ statusCode: 404, message: 'Organisation not found.' })
  const keepAnswers = settingsOf(organisation).privacy.keepAnswersAfterErasure
  const farmCode = request.farmCode.trim()
  const before = await visitsOfFarm(user.organisationId, farmCode)
  if (!before.length && !await listedRowsOfFarm(user.organisationId, farmCode)) throw createError({ statusCode: 404, message: `No visit of farm ${farmCode} is held: nothing to erase. (An erased farm is known only by its new id.)` })

  // The files first: if anything fails after this, the rows are still there and the erasure can simply be repeated.
  const scope = { organisationId: user.organisationId, farmCode, visitIds: before.map(v => v.id) }
  const keys = new Set<string>()
  for (const source of PERSONAL_DATA_SOURCES) for (const key of await source.farmObjectKeys?.(scope) ?? []) keys.add(key)
  await deleteObjects([...keys])

  const id = opaqueId()
  const leftover: string[] = []
  const result = await database().transaction({ isolationLevel: Transaction.ISOLATION_LEVELS.READ_COMMITTED }, async (transaction) => {
    const visits = await visitsOfFarm(user.organisationId, farmCode, transaction)
    if (!visits.length && !await listedRowsOfFarm(user.organisationId, farmCode, transaction)) throw createError({ statusCode: 409, message: 'This farm was erased meanwhile.' })
    const visitIds = visits.map(v => v.id)
    const photos = visits.reduce((n, v) => n + Number(v.photos), 0)
    const now = new Date()
    const [erasureId] = await database().query(`INSERT INTO erasures (organisation_id, farm_key, opaque_id, visit_count, photo_count, kept_answers, created_by, created_at)
      VALUES (?, ?, ?, ?, ?, ?, ?, ?)`, {
      replacements: [user.organisationId, farmKeyOf(user.organisationId, farmCode), id, visits.length, photos, keepAnswers, user.id, now],
      type: QueryTypes.INSERT, transaction
    }) as unknown as [number, number]
    if (visits.length) await database().query(`INSERT INTO erased_visits (visit_id, erasure_id, organisation_id, enumerator_id, device_key, erased_at) VALUES ${visits.map(() => '(?, ?, ?, ?, ?, ?)').join(', ')}
      ON DUPLICATE KEY UPDATE erasure_id = VALUES(erasure_id), erased_at = VALUES(erased_at)`, {
      replacements: visits.flatMap(v => [v.id, erasureId, user.organisationId, v.enumeratorId, v.deviceKey, now]), type: QueryTypes.INSERT, transaction
    })
    const removed: Record<string, number> = {}
    for (const source of PERSONAL_DATA_SOURCES) {
      const done = await source.eraseFarm({ organisationId: user.organisationId, farmCode, visitIds, opaqueId: id, transaction })
      removed[source.label] = done.count
      for (const key of done.objectKeys ?? []) if (!keys.has(key)) leftover.push(key)
    }
    if (!keepAnswers && visitIds.length) {
      // The organisation keeps nothing of an erased farm: its visits go entirely (photos' rows went above).
      await database().query('DELETE FROM visits WHERE id IN (?)', { replacements: [visitIds], type: QueryTypes.DELETE, transaction })
    }
    // Model runs that used the farm read the accepted visits: they are now built on data that has since changed.
    const changedRounds = [...new Set(visits.filter(v => v.reviewState === 'accepted').map(v => v.roundId))].sort((a, b) => a - b)
    for (const roundId of changedRounds) await bumpDataVersion(roundId, transaction)
    const rounds = [...new Set(visits.map(v => v.roundId))]
    await audit(event, user, {
      action: 'farm.erase',
      entityType: 'erasure',
      entityId: erasureId,
      details: { reason: request.reason, opaqueId: id, visits: visits.length, photos, rounds, keptAnswers: keepAnswers, modelRoundsChanged: changedRounds }
    }, transaction)
    return { opaqueId: id, visits: visits.length, photos, rounds: rounds.length, keptAnswers: keepAnswers, modelRoundsChanged: changedRounds.length, removed }
  })
  // Photos uploaded between the listing and the commit (the upload route refuses erased visits from now on).
  if (leftover.length) await deleteObjects(leftover)
  return result
}

/** Visit ids (as the tablet knows them) of this enumerator erased since `since` (all without it): the tablet drops its copies. */
export async function erasedVisitIdsFor(actor: { id: number, organisationId: number }, since?: Date): Promise<string[]> {
  const rows = await database().query<{ visitId: string }>(
    `SELECT device_key AS visitId FROM erased_visits WHERE enumerator_id = ? AND organisation_id = ?${since ? ' AND erased_at >= ?' : ''} ORDER BY erased_at DESC LIMIT 5000`,
    { replacements: [actor.id, actor.organisationId, ...(since ? [since] : [])], type: QueryTypes.SELECT })
  return rows.map(r => r.visitId)
}

/** Whether a visit's personal data was erased (its photos are then refused). */
export async function isErasedVisit(visitId: string): Promise<boolean> {
  const rows = await database().query('SELECT 1 FROM erased_visits WHERE visit_id = ?', { replacements: [visitId], type: QueryTypes.SELECT })
  return rows.length > 0
}

/** The farm codes, among these, whose farm was erased in the organisation. */
export async function erasedFarmCodes(organisationId: number, farmCodes: string[]): Promise<Set<string>> {
  return (await erasedAmong(organisationId, 0, farmCodes, [])).codes
}

/**
 * Among a sync batch's farm codes and device ids: the codes whose farm was erased in the organisation, and the ids
 * of this enumerator's visits that were erased (matched by the id the tablet knows, migration 0070). One round trip:
 * it runs for every batch, on the sync hot path.
 */
export async function erasedAmong(organisationId: number, enumeratorId: number, farmCodes: string[], deviceIds: string[]): Promise<{ codes: Set<string>, ids: Set<string> }> {
  if (!farmCodes.length && !deviceIds.length) return { codes: new Set(), ids: new Set() }
  const byKey = new Map(farmCodes.map(code => [farmKeyOf(organisationId, code), code]))
  const rows = await database().query<{ kind: 'farm' | 'visit', k: string }>(
    `SELECT 'farm' AS kind, farm_key AS k FROM erasures WHERE organisation_id = ? AND farm_key IN (?)
     UNION ALL SELECT 'visit', device_key FROM erased_visits WHERE enumerator_id = ? AND device_key IN (?)`,
    { replacements: [organisationId, byKey.size ? [...byKey.keys()] : [''], enumeratorId, deviceIds.length ? deviceIds : ['']], type: QueryTypes.SELECT })
  const codes = new Set<string>()
  const ids = new Set<string>()
  for (const r of rows) {
    if (r.kind === 'farm') codes.add(byKey.get(r.k)!)
    else ids.add(r.k)
  }
  return { codes, ids }
}
