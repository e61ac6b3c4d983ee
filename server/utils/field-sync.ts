import { createHash } from 'node:crypto'
import { Op, QueryTypes, type Transaction } from 'sequelize'
import { type QuestionnaireVersionDto, questionnaireDefinitionSchema } from '#shared/utils/schemas/questionnaire'
import { type ServerVisit, type SyncAnswer, type SyncResult, type SyncStatus, adoptedOf, visitEnvelopeSchema, visitSchemaFor, type VisitInput } from '#shared/utils/schemas/visit'
import { fieldErrorsOf } from '#shared/utils/zod-errors'
import { Assignment, QuestionnaireVersion, Round, Village, Visit, type VisitFlags } from '../db/models'
import { database } from '../db/connection'
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

export function serverCopyOf(visit: Visit): ServerVisit {
  return {
    id: visit.id,
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

function columnsOf(v: VisitInput, actor: Actor, flags: VisitFlags, hash: string) {
  const where = v.location
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
    consentAt: new Date(v.consentAt),
    startedAt: new Date(v.startedAt),
    savedAt: new Date(v.savedAt),
    adopted: adoptedOf(v.answers),
    reviewState: 'received' as const,
    reviewReason: null,
    flags,
    deviceHash: hash
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
 * Upserts a batch of device visits by their UUIDs in one transaction and answers per record.
 * An identical resend is 'duplicate'; an edit made from an out-of-date copy is 'conflict' (the server wins).
 */
export async function ingestVisits(actor: Actor, records: unknown[]): Promise<SyncAnswer> {
  const { checked, ctx } = await checkRecords(actor, records)
  const settings = { farRadiusKm: serverConfig().FIELD_FAR_RADIUS_KM, minInterviewSeconds: serverConfig().FIELD_MIN_INTERVIEW_SECONDS }
  for (let attempt = 1; ; attempt++) {
    try {
      const results = await database().transaction(t => writeBatch(actor, checked, ctx, settings, t))
      const counts: Record<SyncStatus, number> = { stored: 0, duplicate: 0, rejected: 0, conflict: 0 }
      for (const r of results) counts[r.status]++
      return { results, counts }
    }
    catch (error) {
      // Two devices (or two tabs) sending the same new id at once: the loser retries and sees it as existing.
      const name = (error as { name?: string }).name
      const deadlock = /Deadlock/i.test(String((error as Error).message))
      if (attempt >= 3 || (name !== 'SequelizeUniqueConstraintError' && !deadlock)) throw error
    }
  }
}

async function writeBatch(actor: Actor, checked: Checked[], ctx: Awaited<ReturnType<typeof loadContext>>, settings: { farRadiusKm: number, minInterviewSeconds: number }, transaction: Transaction): Promise<SyncResult[]> {
  const valid = checked.filter((c): c is Extract<Checked, { input: VisitInput }> => 'input' in c)
  // One query for every id already on the server, locked until this batch commits.
  const existing = valid.length
    ? await Visit.findAll({ where: { id: valid.map(c => c.input.id) }, transaction, lock: transaction.LOCK.UPDATE })
    : []
  const byId = new Map(existing.map(v => [v.id, v]))
  const results: SyncResult[] = checked.map(c => 'result' in c ? c.result : { id: c.input.id, status: 'stored' })
  const toWrite: Array<{ c: typeof valid[number], previous?: Visit }> = []
  const seenInBatch = new Map<string, string>()
  for (const c of valid) {
    const previous = byId.get(c.input.id)
    const earlier = seenInBatch.get(c.input.id)
    if (earlier !== undefined) {
      results[c.index] = earlier === c.hash
        ? { id: c.input.id, status: 'duplicate' }
        : { id: c.input.id, status: 'rejected', errors: { id: 'The same visit id twice in one batch with different content' } }
      continue
    }
    seenInBatch.set(c.input.id, c.hash)
    if (!previous) {
      toWrite.push({ c })
      continue
    }
    if (previous.enumeratorId !== actor.id || previous.organisationId !== actor.organisationId) {
      results[c.index] = { id: c.input.id, status: 'rejected', errors: { id: 'This visit id belongs to another record' } }
    }
    else if (previous.deviceHash === c.hash) {
      results[c.index] = { id: c.input.id, status: 'duplicate', version: previous.version }
    }
    else if (previous.reviewState === 'accepted' || previous.version !== c.input.baseVersion) {
      results[c.index] = { id: c.input.id, status: 'conflict', version: previous.version, server: serverCopyOf(previous) }
    }
    else {
      toWrite.push({ c, previous })
    }
  }
  if (!toWrite.length) return results

  const duplicates = await duplicateFarmCodes(toWrite.map(w => w.c.input), transaction)
  const inserts = []
  for (const { c, previous } of toWrite) {
    const v = c.input
    const flags = intrinsicFlags(
      { lat: v.location.lat ?? null, lon: v.location.lon ?? null, startedAt: v.startedAt, savedAt: v.savedAt, answers: v.answers },
      ctx.villages.get(v.villageId), ctx.versions.get(v.questionnaireVersionId)!.definition.questions, settings)
    if (duplicates.flagged.has(v.id)) flags.duplicateFarmCode = true
    const columns = columnsOf(v, actor, flags, c.hash)
    if (previous) {
      // A resubmission (after send-back, or an edit before review) replaces the device's fields.
      await previous.update({ ...columns, version: previous.version + 1 }, { transaction })
      results[c.index] = { id: v.id, status: 'stored', version: previous.version }
    }
    else {
      inserts.push(columns)
      results[c.index] = { id: v.id, status: 'stored', version: 1 }
    }
  }
  if (inserts.length) await Visit.bulkCreate(inserts, { transaction })
  if (duplicates.earlier.length) {
    await database().query('UPDATE visits SET flags = JSON_SET(flags, \'$.duplicateFarmCode\', true) WHERE id IN (?)', { replacements: [duplicates.earlier], transaction, type: QueryTypes.UPDATE })
  }
  return results
}

/** Visits of this batch whose farm code is already used in their round (or twice in the batch), and the earlier ones. */
async function duplicateFarmCodes(visits: VisitInput[], transaction: Transaction) {
  const ids = new Set(visits.map(v => v.id))
  const rows = await Visit.findAll({
    attributes: ['id', 'roundId', 'farmCode'],
    where: { roundId: [...new Set(visits.map(v => v.roundId))], farmCode: [...new Set(visits.map(v => v.farmCode))], id: { [Op.notIn]: [...ids] } },
    transaction
  })
  const keyOf = (roundId: number, farmCode: string) => `${roundId}:${farmCode.toLowerCase()}`
  const counts = new Map<string, number>()
  for (const v of visits) counts.set(keyOf(v.roundId, v.farmCode), (counts.get(keyOf(v.roundId, v.farmCode)) ?? 0) + 1)
  const onServer = new Map<string, string[]>()
  for (const r of rows) onServer.set(keyOf(r.roundId, r.farmCode), [...(onServer.get(keyOf(r.roundId, r.farmCode)) ?? []), r.id])
  const flagged = new Set<string>()
  const earlier: string[] = []
  for (const v of visits) {
    const key = keyOf(v.roundId, v.farmCode)
    if ((counts.get(key) ?? 0) > 1 || onServer.has(key)) flagged.add(v.id)
  }
  for (const [key, list] of onServer) if (counts.has(key)) earlier.push(...list)
  return { flagged, earlier }
}
