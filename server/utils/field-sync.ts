import { createHash, randomUUID } from 'node:crypto'
import { Op, QueryTypes, Transaction, col, where as sqlWhere } from 'sequelize'
import { type QuestionnaireVersionDto, questionnaireDefinitionSchema } from '#shared/utils/schemas/questionnaire'
import { type ServerVisit, type SyncAnswer, type SyncResult, type SyncStatus, adoptedOf, notAskedKeys, visitEnvelopeSchema, visitSchemaFor, type VisitInput } from '#shared/utils/schemas/visit'
import { fieldErrorsOf } from '#shared/utils/zod-errors'
import { Assignment, QuestionnaireVersion, Round, Village, Visit, type VisitFlags } from '../db/models'
import { database } from '../db/connection'
import { erasedAmong } from './erasure'
import { type RegisteredFarm, farmsOfCodes } from './farm-register'
import { normalisedFarmCode } from './pseudonyms'
import { intrinsicFlags } from './visit-flags'

interface Actor { id: number, organisationId: number }

/** Canonical JSON (sorted keys), so that the same record always hashes the same. */
function canonical(value: unknown): string {
  if (Array.isArray(value)) return `[${value.map(canonical).join(',')}]`
  if (value && typeof value === 'object') {
    return `{${Object.keys(value).sort().filter(k => (value as Record<string, unknown>)[k] !== undefined)
      .map(k => `${JSON.stringify(k)}:${canonical((value as Record<string, unknown>)[k])}`).join(',')}}`
  }
  return JSON.stringify(value)
}

export function deviceHashOf(visit: VisitInput): string {
  const { baseVersion: _ignored, ...content } = visit
  return createHash('sha256').update(canonical(content)).digest('hex')
}

/** The visit as its tablet knows it: under the device's own id. */
export function serverCopyOf(visit: Visit): ServerVisit {
  return {
    id: visit.deviceId ?? visit.id,
    roundId: visit.roundId,
    villageId: visit.villageId,
    questionnaireVersionId: visit.questionnaireVersionId,
    farmCode: visit.farmCode,
    answers: visit.answers,
    reviewState: visit.reviewState,
    reviewReason: visit.reviewReason,
    version: visit.version,
    updatedAt: visit.updatedAt.toISOString()
  }
}

function columnsOf(v: VisitInput, actor: Actor, flags: VisitFlags, hash: string, notAsked: string[], farm: RegisteredFarm | undefined) {
  const where = v.location
  // Linked to its registered farm, unless the farm's home village is another one: then unlinked and flagged.
  const atHome = !farm || farm.villageId === v.villageId
  return {
    id: v.id,
    organisationId: actor.organisationId,
    roundId: v.roundId,
    villageId: v.villageId,
    enumeratorId: actor.id,
    questionnaireVersionId: v.questionnaireVersionId,
    farmCode: v.farmCode,
    lat: where.lat ?? null,
    lon: where.lon ?? null,
    accuracyM: where.kind === 'gps' ? where.accuracyM : null,
    manualLocationReason: where.kind === 'manual' ? where.reason : null,
    answers: v.answers,
    notAsked: notAsked.length ? notAsked : null,
    consentAt: new Date(v.consentAt),
    startedAt: new Date(v.startedAt),
    savedAt: new Date(v.savedAt),
    adopted: adoptedOf(v.answers),
    reviewState: 'received' as const,
    reviewReason: null,
    flags: atHome ? flags : { ...flags, farmInOtherVillage: farm.villageName },
    farmId: farm && atHome ? farm.id : null,
    deviceHash: hash,
    deviceId: null as string | null
  }
}

async function loadContext(actor: Actor, roundIds: number[], versionIds: number[], villageIds: number[]) {
  const [rounds, versions, assignments, villages] = await Promise.all([
    Round.findAll({ where: { id: roundIds, organisationId: actor.organisationId }, attributes: ['id', 'status'] }),
    QuestionnaireVersion.findAll({ where: { id: versionIds, roundId: roundIds } }),
    Assignment.findAll({ where: { userId: actor.id, roundId: roundIds }, attributes: ['roundId', 'villageId'] }),
    Village.findAll({ where: { id: villageIds, organisationId: actor.organisationId }, attributes: ['id', 'centreLat', 'centreLon'] })
  ])
  const versionDtos = new Map<number, QuestionnaireVersionDto>()
  for (const v of versions) {
    versionDtos.set(v.id, { id: v.id, roundId: v.roundId, number: v.number, definition: questionnaireDefinitionSchema.parse(v.definition) })
  }
  return {
    openRounds: new Set(rounds.filter(r => r.status === 'open').map(r => r.id)),
    versions: versionDtos,
    assigned: new Set(assignments.map(a => `${a.roundId}:${a.villageId}`)),
    villages: new Map(villages.map(v => [v.id, v]))
  }
}

type Checked = { index: number, input: VisitInput, hash: string } | { index: number, result: SyncResult }

/** Validates every record on its own: the envelope first, then the schema of its questionnaire version. */
async function checkRecords(actor: Actor, records: unknown[]) {
  const envelopes = records.map(r => visitEnvelopeSchema.safeParse(r))
  const ok = envelopes.flatMap(e => e.success ? [e.data] : [])
  const ctx = await loadContext(actor,
    [...new Set(ok.map(e => e.roundId))], [...new Set(ok.map(e => e.questionnaireVersionId))], [...new Set(ok.map(e => e.villageId))])
  const checked: Checked[] = records.map((record, index) => {
    const envelope = envelopes[index]!
    const rawId = typeof (record as { id?: unknown })?.id === 'string' ? (record as { id: string }).id : null
    const reject = (errors: Record<string, string>): Checked => ({ index, result: { id: rawId, status: 'rejected', errors } })
    if (!envelope.success) return reject(fieldErrorsOf(envelope.error))
    const e = envelope.data
    if (!ctx.assigned.has(`${e.roundId}:${e.villageId}`)) return reject({ villageId: 'You are not assigned to this village in this round' })
    if (!ctx.openRounds.has(e.roundId)) return reject({ roundId: 'This round is not open for visits' })
    const version = ctx.versions.get(e.questionnaireVersionId)
    if (!version) return reject({ questionnaireVersionId: 'Unknown questionnaire version for this round' })
    const parsed = visitSchemaFor(version).safeParse(record)
    if (!parsed.success) return reject(fieldErrorsOf(parsed.error))
    return { index, input: parsed.data, hash: deviceHashOf(parsed.data) }
  })
  return { checked, ctx }
}

/**
 * Runs `work` (one whole transaction) again after a deadlock, a lock wait timeout, a Galera certification
 * conflict or a concurrent insert of the same new id, waiting a jittered, growing pause between attempts so
 * that the colliding batches do not meet again. What still fails is thrown and answered 503 (see retryable.ts).
 */
async function withConflictRetry<T>(work: () => Promise<T>, attempts = 5): Promise<T> {
  for (let attempt = 1; ; attempt++) {
    try {
      return await work()
    }
    catch (error) {
      // Two devices (or two tabs) sending the same new id at once: the loser retries and sees it as existing.
      const sameNewId = (error as { name?: string }).name === 'SequelizeUniqueConstraintError'
      if (attempt >= attempts || !(sameNewId || isLockConflict(error))) {
        if (sameNewId) throw createError({ statusCode: 503, message: BUSY_MESSAGE, cause: error })
        throw error
      }
      await new Promise(resolve => setTimeout(resolve, Math.random() * 25 * 2 ** attempt))
    }
  }
}

/**
 * Upserts a batch of device visits by their UUIDs in one transaction and answers per record.
 * An identical resend is 'duplicate'; an edit made from an out-of-date copy is 'conflict' (the server wins).
 *
 * Designed so that concurrent batches do not deadlock: READ COMMITTED (locking reads take no gap locks, so
 * batches of different devices never block each other's inserts), rows locked and written in id order (two
 * batches sharing ids wait for each other instead of crossing), the version check inside the UPDATE, and the
 * duplicate-farm-code flags, which touch other people's visits, set after the commit in a statement of their own.
 * The farm register is written before the transaction (new codes only, idempotent), so a code registered by
 * another batch meanwhile never blocks this one; a farm registered for a record then answered 'conflict' (or for a
 * batch that failed) has no visit; the retention purge of names removes such farms once a day old, and an erasure
 * of the code reaches them like any other.
 */
export async function ingestVisits(actor: Actor, records: unknown[]): Promise<SyncAnswer> {
  const { checked: all, ctx } = await checkRecords(actor, records)
  const checked = await withoutErasedFarms(actor, all)
  const settings = { farRadiusKm: serverConfig().FIELD_FAR_RADIUS_KM, minInterviewSeconds: serverConfig().FIELD_MIN_INTERVIEW_SECONDS }
  const valid = checked.flatMap(c => 'input' in c ? [c.input] : [])
  // Codes new to the register are registered before the batch's transaction, the earliest saved visit deciding the
  // home village, so that the batch's own INSERT carries the link (no second pass over the rows after the commit).
  const earliestFirst = [...valid].sort((a, b) => Date.parse(a.savedAt) - Date.parse(b.savedAt) || (a.id < b.id ? -1 : 1))
  const farms = await withConflictRetry(() => farmsOfCodes(actor.organisationId, earliestFirst))
  const results = await withConflictRetry(() => database().transaction(
    { isolationLevel: Transaction.ISOLATION_LEVELS.READ_COMMITTED },
    t => writeBatch(actor, checked, { ...ctx, farms }, settings, t)))
  // Idempotent and run for every valid record, stored or not: if it fails, the device's resend (all duplicates)
  // runs it again, so no flag is lost to a crash between the commit and here.
  const kept = checked.flatMap(c => 'input' in c && results[c.index]?.status !== 'rejected' ? [c.input] : [])
  await withConflictRetry(() => flagDuplicateFarmCodes(kept))
  const counts: Record<SyncStatus, number> = { stored: 0, duplicate: 0, rejected: 0, conflict: 0, erased: 0 }
  for (const r of results) counts[r.status]++
  return { results, counts }
}

type Valid = Extract<Checked, { input: VisitInput }>

/**
 * A record of a farm whose personal data was erased (by the farm code's key, or a visit id already erased) is not
 * stored again: the answer `erased` tells the tablet to delete its copy, which a farmer who withdrew consent is owed.
 */
async function withoutErasedFarms(actor: Actor, checked: Checked[]): Promise<Checked[]> {
  const valid = checked.flatMap(c => 'input' in c ? [c.input] : [])
  if (!valid.length) return checked
  const { codes, ids: erasedIds } = await erasedAmong(actor.organisationId, actor.id, [...new Set(valid.map(v => v.farmCode))], valid.map(v => v.id))
  return checked.map(c => 'input' in c && (codes.has(c.input.farmCode) || erasedIds.has(c.input.id))
    ? { index: c.index, result: { id: c.input.id, status: 'erased' } }
    : c)
}

type BatchContext = Awaited<ReturnType<typeof loadContext>> & { farms: Map<string, RegisteredFarm> }

async function writeBatch(actor: Actor, checked: Checked[], ctx: BatchContext, settings: { farRadiusKm: number, minInterviewSeconds: number }, transaction: Transaction): Promise<SyncResult[]> {
  const results: SyncResult[] = checked.map(c => 'result' in c ? c.result : { id: c.input.id, status: 'stored' })
  // The first record of an id in the batch counts; a later one is a duplicate or, with other content, rejected.
  const first = new Map<string, Valid>()
  for (const c of checked) {
    if (!('input' in c)) continue
    const earlier = first.get(c.input.id)
    if (!earlier) first.set(c.input.id, c)
    else if (earlier.hash === c.hash) results[c.index] = { id: c.input.id, status: 'duplicate' }
    else results[c.index] = { id: c.input.id, status: 'rejected', errors: { id: 'The same visit id twice in one batch with different content' } }
  }
  const valid = [...first.values()].sort((a, b) => a.input.id < b.input.id ? -1 : a.input.id > b.input.id ? 1 : 0)
  if (!valid.length) return results
  // This enumerator's rows with these device ids, locked in primary-key order until the commit; ids not on the
  // server lock nothing. Only the enumerator's own space is looked at (migration 0070): other people's rows never
  // change the answer, so nobody learns from it whether an id exists elsewhere.
  const existing = await Visit.findAll({
    where: { enumeratorId: actor.id, [Op.and]: [sqlWhere(col('device_key'), { [Op.in]: valid.map(c => c.input.id) })] },
    order: [['id', 'ASC']], transaction, lock: transaction.LOCK.UPDATE
  })
  const byId = new Map(existing.map(v => [v.deviceId ?? v.id, v]))
  // A new device id that another person's row holds as its server id is stored under a fresh server id.
  const fresh = valid.filter(c => !byId.has(c.input.id)).map(c => c.input.id)
  const taken = new Set(fresh.length ? (await Visit.findAll({ where: { id: fresh }, attributes: ['id'], transaction })).map(v => v.id) : [])

  const columnsFor = (c: Valid) => {
    const v = c.input
    const questions = ctx.versions.get(v.questionnaireVersionId)!.definition.questions
    const flags = intrinsicFlags(
      { lat: v.location.lat ?? null, lon: v.location.lon ?? null, startedAt: v.startedAt, savedAt: v.savedAt, answers: v.answers },
      ctx.villages.get(v.villageId), questions, settings)
    // The schema refused answers to hidden questions; what its conditions hid is stored as "not asked".
    return columnsOf(v, actor, flags, c.hash, notAskedKeys(questions, v.answers), ctx.farms.get(normalisedFarmCode(v.farmCode)))
  }
  const inserts = []
  for (const c of valid) {
    const previous = byId.get(c.input.id)
    if (!previous) {
      const columns = columnsFor(c)
      inserts.push(taken.has(c.input.id) ? { ...columns, id: randomUUID(), deviceId: c.input.id } : columns)
      results[c.index] = { id: c.input.id, status: 'stored', version: 1 }
    }
    else if (previous.deviceHash === c.hash) {
      results[c.index] = { id: c.input.id, status: 'duplicate', version: previous.version }
    }
    else if (previous.reviewState === 'accepted' || previous.version !== c.input.baseVersion) {
      results[c.index] = { id: c.input.id, status: 'conflict', version: previous.version, server: serverCopyOf(previous) }
    }
    else {
      // A resubmission (after send-back, or an edit before review) replaces the device's fields; the version
      // the device edited from is part of the statement, so a row changed meanwhile is never overwritten.
      const { id: _id, deviceId: _deviceId, ...columns } = columnsFor(c)
      const [changed] = await Visit.update({ ...columns, version: previous.version + 1 }, {
        where: { id: previous.id, version: previous.version, reviewState: { [Op.ne]: 'accepted' } }, transaction
      })
      if (changed !== 1) throw Object.assign(new Error('visit changed during the batch'), { errno: 1213 })
      results[c.index] = { id: c.input.id, status: 'stored', version: previous.version + 1 }
    }
  }
  // One multi-row insert in id order (the list is sorted).
  if (inserts.length) await insertVisits(inserts, transaction)
  return results
}

const INSERT_COLUMNS = ['id', 'device_id', 'organisation_id', 'round_id', 'village_id', 'enumerator_id', 'questionnaire_version_id', 'farm_code',
  'lat', 'lon', 'accuracy_m', 'manual_location_reason', 'answers', 'not_asked', 'consent_at', 'started_at', 'saved_at', 'adopted',
  'review_state', 'review_reason', 'flags', 'farm_id', 'device_hash', 'version', 'created_at', 'updated_at'] as const

/**
 * One plain multi-row INSERT. Written by hand rather than through bulkCreate, which builds, validates and
 * serialises a model instance per visit: app-server CPU is what limits sync throughput (see the CPU columns of
 * the sync bench), and the rows were validated by the zod schema already.
 */
async function insertVisits(rows: Array<ReturnType<typeof columnsOf>>, transaction: Transaction) {
  const now = new Date()
  const values = rows.flatMap(r => [r.id, r.deviceId, r.organisationId, r.roundId, r.villageId, r.enumeratorId, r.questionnaireVersionId, r.farmCode,
    r.lat, r.lon, r.accuracyM, r.manualLocationReason, JSON.stringify(r.answers), r.notAsked ? JSON.stringify(r.notAsked) : null, r.consentAt, r.startedAt, r.savedAt, r.adopted,
    r.reviewState, r.reviewReason, JSON.stringify(r.flags), r.farmId, r.deviceHash, 1, now, now])
  const row = `(${INSERT_COLUMNS.map(() => '?').join(', ')})`
  await database().query(`INSERT INTO visits (${INSERT_COLUMNS.join(', ')}) VALUES ${rows.map(() => row).join(', ')}`, {
    replacements: values, transaction, type: QueryTypes.INSERT
  })
}

/**
 * Marks every visit whose farm code is used more than once in its round, for the rounds and farm codes of this
 * batch. Runs after the batch committed, as its own statement: it may touch other enumerators' visits, and
 * holding those locks inside the batch made batches of different people deadlock. Rows are locked in id order.
 */
async function flagDuplicateFarmCodes(visits: VisitInput[]) {
  if (!visits.length) return
  const rows = await database().query<{ id: string }>(`SELECT v.id FROM visits v
    JOIN (SELECT round_id, farm_code FROM visits WHERE round_id IN (:rounds) AND farm_code IN (:codes)
          GROUP BY round_id, farm_code HAVING COUNT(*) > 1) d ON d.round_id = v.round_id AND d.farm_code = v.farm_code
    WHERE COALESCE(JSON_VALUE(v.flags, '$.duplicateFarmCode'), '') <> 'true'
    ORDER BY v.id`, {
    replacements: { rounds: [...new Set(visits.map(v => v.roundId))], codes: [...new Set(visits.map(v => v.farmCode))] },
    type: QueryTypes.SELECT
  })
  if (!rows.length) return
  await database().query('UPDATE visits SET flags = JSON_SET(flags, \'$.duplicateFarmCode\', true) WHERE id IN (?) ORDER BY id', {
    replacements: [rows.map(r => r.id)], type: QueryTypes.UPDATE
  })
}
