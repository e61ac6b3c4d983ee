import { createHash, randomBytes } from 'node:crypto'
import { QueryTypes, type Transaction } from 'sequelize'
import type { PersonalDataKind } from '#shared/utils/schemas/privacy'
import { QuestionnaireVersion } from '../db/models'
import { database } from '../db/connection'
import { pseudonymOf } from './pseudonyms'

// EVERY place that holds a farmer's personal data, in one list. Erasure on request (erasure.ts) and the retention
// purge (retention.ts) both walk this list, so a new kind of personal data (a sample list with farm heads' names,
// say) is covered by adding one entry here: its label, its retention kind, how to erase one farm's rows and how to
// purge a closed round's rows. Photos' bytes live in the object store: sources return the keys of the objects to
// delete and the callers delete them (before the rows, so a failure leaves rows a retry can find).

export interface FarmScope {
  organisationId: number
  /** The farm's code as it is stored (matched without regard to case) and the ids of its visits. */
  farmCode: string
  visitIds: string[]
  /** What replaces the farm code: a random id that nothing links back to the farm. */
  opaqueId: string
  transaction: Transaction
}

export interface RoundScope {
  organisationId: number
  roundIds: number[]
  transaction: Transaction
  now: Date
}

export interface SourceResult {
  /** Rows (or answers, positions, photos) changed or removed. */
  count: number
  /** Object-store keys that must be deleted with the rows. */
  objectKeys?: string[]
}

export interface PersonalDataSource {
  /** Plain words for the settings page, the erasure summary and the purge report. */
  label: string
  kind: PersonalDataKind
  /** Lists the object keys the erasure will delete (read before the transaction; see the note above). */
  farmObjectKeys?: (scope: Omit<FarmScope, 'transaction' | 'opaqueId'>) => Promise<string[]>
  eraseFarm: (scope: FarmScope) => Promise<SourceResult>
  /** How many items this source still holds per round, for the given (closed) rounds. */
  heldPerRound?: (organisationId: number, roundIds: number[]) => Promise<Map<number, number>>
  roundObjectKeys?: (organisationId: number, roundIds: number[]) => Promise<string[]>
  purgeRounds?: (scope: RoundScope) => Promise<SourceResult>
}

const select = <T extends object>(sql: string, replacements: unknown[], transaction?: Transaction) =>
  database().query<T>(sql, { replacements, type: QueryTypes.SELECT, transaction })

async function update(sql: string, replacements: unknown[], transaction: Transaction): Promise<number> {
  const [, affected] = await database().query(sql, { replacements, type: QueryTypes.UPDATE, transaction }) as unknown as [unknown, number]
  return Number(affected ?? 0)
}

function perRound(rows: Array<{ roundId: number, n: number | string }>): Map<number, number> {
  return new Map(rows.map(r => [Number(r.roundId), Number(r.n)]))
}

interface TextKeys {
  /** Free-text questions asked once per visit: answers.<key>. */
  top: string[]
  /** Free-text questions inside repeated groups, per group key: answers.<group>[i].<key>. */
  rows: Array<{ group: string, keys: string[] }>
}

/** The keys of free-text questions per questionnaire version: free text may hold names, places, anything. */
async function textKeysByVersion(versionIds: number[], transaction?: Transaction): Promise<Map<number, TextKeys>> {
  const versions = await QuestionnaireVersion.findAll({ where: { id: [...new Set(versionIds)] }, attributes: ['id', 'definition'], transaction })
  return new Map(versions.map(v => [v.id, {
    top: v.definition.questions.filter(q => q.type === 'text').map(q => q.key),
    rows: (v.definition.groups ?? []).map(g => ({ group: g.key, keys: g.questions.filter(q => q.type === 'text').map(q => q.key) })).filter(g => g.keys.length > 0)
  }]))
}

/** The answers without the rows' free text; null when no row held any. */
export function answersWithoutRowText(answers: Record<string, unknown>, rows: TextKeys['rows']): Record<string, unknown> | null {
  let changed = false
  const out: Record<string, unknown> = { ...answers }
  for (const { group, keys } of rows) {
    const list = Object.prototype.hasOwnProperty.call(answers, group) ? answers[group] : undefined
    if (!Array.isArray(list)) continue
    out[group] = list.map((row: unknown) => {
      if (!row || typeof row !== 'object' || Array.isArray(row)) return row
      const held = keys.filter(k => Object.prototype.hasOwnProperty.call(row, k))
      if (!held.length) return row
      changed = true
      return Object.fromEntries(Object.entries(row).filter(([k]) => !keys.includes(k)))
    })
  }
  return changed ? out : null
}

/**
 * Removes the free-text answers of the given visits: the top-level ones with one statement per questionnaire version,
 * the ones inside a group's rows (a plot's note, say) visit by visit, as JSON paths cannot reach every row at once.
 * Returns how many visits held any.
 */
async function dropTextAnswers(visits: Array<{ id: string, questionnaireVersionId: number }>, transaction: Transaction): Promise<number> {
  const keys = await textKeysByVersion(visits.map(v => v.questionnaireVersionId), transaction)
  const held = new Set<string>()
  for (const [versionId, { top, rows }] of keys) {
    const ids = visits.filter(v => v.questionnaireVersionId === versionId).map(v => v.id)
    if (!ids.length) continue
    if (top.length) {
      const paths = top.map(k => `$.${k}`)
      // Question keys are [a-z][a-z0-9_]*, so each path is a plain member path.
      const holding = await select<{ id: string }>(`SELECT id FROM visits WHERE id IN (?) AND (${paths.map(() => 'JSON_EXISTS(answers, ?)').join(' OR ')})`, [ids, ...paths], transaction)
      for (const r of holding) held.add(r.id)
      await update(`UPDATE visits SET answers = JSON_REMOVE(answers, ${paths.map(() => '?').join(', ')}) WHERE id IN (?)`, [...paths, ids], transaction)
    }
    if (!rows.length) continue
    const stored = await select<{ id: string, answers: unknown }>('SELECT id, answers FROM visits WHERE id IN (?) FOR UPDATE', [ids], transaction)
    for (const v of stored) {
      const answers = typeof v.answers === 'string' ? JSON.parse(v.answers) as unknown : v.answers
      if (!answers || typeof answers !== 'object' || Array.isArray(answers)) continue
      const blanked = answersWithoutRowText(answers as Record<string, unknown>, rows)
      if (!blanked) continue
      held.add(v.id)
      await update('UPDATE visits SET answers = ? WHERE id = ?', [JSON.stringify(blanked), v.id], transaction)
    }
  }
  return held.size
}

const visitPhotos: PersonalDataSource = {
  label: 'Photos of the farm (the files in storage and their records)',
  kind: 'photos',
  farmObjectKeys: async ({ visitIds }) => visitIds.length
    ? (await select<{ objectKey: string }>('SELECT object_key AS objectKey FROM photos WHERE visit_id IN (?)', [visitIds])).map(r => r.objectKey)
    : [],
  eraseFarm: async ({ visitIds, transaction }) => {
    if (!visitIds.length) return { count: 0 }
    const rows = await select<{ objectKey: string }>('SELECT object_key AS objectKey FROM photos WHERE visit_id IN (?) FOR UPDATE', [visitIds], transaction)
    await update('DELETE FROM photos WHERE visit_id IN (?)', [visitIds], transaction)
    return { count: rows.length, objectKeys: rows.map(r => r.objectKey) }
  },
  heldPerRound: async (organisationId, roundIds) => perRound(await select(`SELECT v.round_id AS roundId, COUNT(*) AS n FROM photos p
    JOIN visits v ON v.id = p.visit_id WHERE v.organisation_id = ? AND v.round_id IN (?) GROUP BY v.round_id`, [organisationId, roundIds])),
  roundObjectKeys: async (organisationId, roundIds) => (await select<{ objectKey: string }>(`SELECT p.object_key AS objectKey FROM photos p
    JOIN visits v ON v.id = p.visit_id WHERE v.organisation_id = ? AND v.round_id IN (?)`, [organisationId, roundIds])).map(r => r.objectKey),
  purgeRounds: async ({ organisationId, roundIds, transaction }) => {
    const rows = await select<{ objectKey: string }>(`SELECT p.object_key AS objectKey FROM photos p JOIN visits v ON v.id = p.visit_id
      WHERE v.organisation_id = ? AND v.round_id IN (?) FOR UPDATE`, [organisationId, roundIds], transaction)
    await update('DELETE p FROM photos p JOIN visits v ON v.id = p.visit_id WHERE v.organisation_id = ? AND v.round_id IN (?)', [organisationId, roundIds], transaction)
    return { count: rows.length, objectKeys: rows.map(r => r.objectKey) }
  }
}

const HAS_POSITION = '(lat IS NOT NULL OR lon IS NOT NULL OR accuracy_m IS NOT NULL OR manual_location_reason IS NOT NULL)'
const CLEAR_POSITION = 'lat = NULL, lon = NULL, accuracy_m = NULL, manual_location_reason = NULL'

const visitPositions: PersonalDataSource = {
  label: 'Where the farm is: GPS points, typed positions and the reasons given for no GPS fix',
  kind: 'gps',
  eraseFarm: async ({ visitIds, transaction }) => visitIds.length
    ? { count: await update(`UPDATE visits SET ${CLEAR_POSITION} WHERE id IN (?) AND ${HAS_POSITION}`, [visitIds], transaction) }
    : { count: 0 },
  heldPerRound: async (organisationId, roundIds) => perRound(await select(`SELECT round_id AS roundId, COUNT(*) AS n FROM visits
    WHERE organisation_id = ? AND round_id IN (?) AND ${HAS_POSITION} GROUP BY round_id`, [organisationId, roundIds])),
  purgeRounds: async ({ organisationId, roundIds, transaction }) => ({
    count: await update(`UPDATE visits SET ${CLEAR_POSITION} WHERE organisation_id = ? AND round_id IN (?) AND ${HAS_POSITION}`, [organisationId, roundIds], transaction)
  })
}

// The device hash is a SHA-256 of the whole record, farm code included: it is replaced too, or a guessed farm code
// could be checked against it. A later resend of the old record is recognised by the erasure's farm key instead.
const randomHash = () => createHash('sha256').update(randomBytes(32)).digest('hex')

const visitIdentifiers: PersonalDataSource = {
  label: 'Who the farm is: the farm code, free-text answers and the reviewers\' notes on its visits',
  kind: 'names',
  eraseFarm: async ({ visitIds, opaqueId, transaction }) => {
    if (!visitIds.length) return { count: 0 }
    const visits = await select<{ id: string, questionnaireVersionId: number }>('SELECT id, questionnaire_version_id AS questionnaireVersionId FROM visits WHERE id IN (?)', [visitIds], transaction)
    const texts = await dropTextAnswers(visits, transaction)
    for (const v of visits) await update('UPDATE visits SET farm_code = ?, device_hash = ?, review_reason = NULL, names_purged_at = NOW(3) WHERE id = ?', [opaqueId, randomHash(), v.id], transaction)
    return { count: visits.length + texts }
  },
  heldPerRound: async (organisationId, roundIds) => perRound(await select(`SELECT round_id AS roundId, COUNT(*) AS n FROM visits
    WHERE organisation_id = ? AND round_id IN (?) AND names_purged_at IS NULL GROUP BY round_id`, [organisationId, roundIds])),
  purgeRounds: async ({ organisationId, roundIds, transaction, now }) => {
    const visits = await select<{ id: string, farmCode: string, questionnaireVersionId: number }>(`SELECT id, farm_code AS farmCode,
      questionnaire_version_id AS questionnaireVersionId FROM visits WHERE organisation_id = ? AND round_id IN (?) AND names_purged_at IS NULL
      ORDER BY id FOR UPDATE`, [organisationId, roundIds], transaction)
    if (!visits.length) return { count: 0 }
    await dropTextAnswers(visits, transaction)
    // The pseudonym the exports use: an analyst's earlier pseudonymised files still match the purged rows.
    for (const v of visits) {
      await update('UPDATE visits SET farm_code = ?, device_hash = ?, review_reason = NULL, names_purged_at = ? WHERE id = ?', [pseudonymOf(organisationId, v.farmCode), randomHash(), now, v.id], transaction)
    }
    return { count: visits.length }
  }
}

// Audit entries of a visit keep what a coordinator corrected (old and new answers, free text included) and the
// reasons given: their details are replaced by a note; who did what and when stays.
const visitAuditDetails: PersonalDataSource = {
  label: 'Answers and reasons quoted in the audit log entries of the farm\'s visits',
  kind: 'names',
  eraseFarm: async ({ organisationId, visitIds, transaction }) => visitIds.length
    ? { count: await update(`UPDATE audit_entries SET details = JSON_OBJECT('removed', 'personal data erased') WHERE organisation_id = ?
        AND entity_type = 'visit' AND entity_id IN (?) AND details IS NOT NULL`, [organisationId, visitIds], transaction) }
    : { count: 0 },
  purgeRounds: async ({ organisationId, roundIds, transaction }) => ({
    count: await update(`UPDATE audit_entries a JOIN visits v ON v.id = a.entity_id AND a.entity_type = 'visit'
      SET a.details = JSON_OBJECT('removed', 'retention period ended')
      WHERE a.organisation_id = ? AND v.round_id IN (?) AND a.details IS NOT NULL AND JSON_VALUE(a.details, '$.removed') IS NULL`, [organisationId, roundIds], transaction)
  })
}

// Mail telling an enumerator that a visit was sent back names the farm code in its subject and text.
const sentBackMail: PersonalDataSource = {
  label: 'Messages to enumerators that name the farm',
  kind: 'names',
  eraseFarm: async ({ organisationId, farmCode, transaction }) => ({
    count: await update(`UPDATE mail_messages SET subject = 'A visit was sent back', text_body = '(removed: personal data erased)', html_body = NULL
      WHERE organisation_id = ? AND (LOCATE(CONCAT('Visit ', ?, ' in '), subject) > 0 OR LOCATE(CONCAT('farm ', ?, ' in '), text_body) > 0)`,
    [organisationId, farmCode, farmCode], transaction)
  }),
  // Retention: the messages naming any farm of the rounds whose names are due. Listed before visitIdentifiers,
  // which replaces the farm codes these messages are found by.
  purgeRounds: async ({ organisationId, roundIds, transaction }) => {
    const codes = (await select<{ farmCode: string }>('SELECT DISTINCT farm_code AS farmCode FROM visits WHERE organisation_id = ? AND round_id IN (?) AND names_purged_at IS NULL',
      [organisationId, roundIds], transaction)).map(r => r.farmCode)
    let count = 0
    // In slices, so one statement never carries tens of thousands of patterns.
    for (let i = 0; i < codes.length; i += 200) {
      const slice = codes.slice(i, i + 200)
      const tests = slice.map(() => '(LOCATE(CONCAT(\'Visit \', ?, \' in \'), subject) > 0 OR LOCATE(CONCAT(\'farm \', ?, \' in \'), text_body) > 0)').join(' OR ')
      count += await update(`UPDATE mail_messages SET subject = 'A visit was sent back', text_body = '(removed: retention period ended)', html_body = NULL
        WHERE organisation_id = ? AND (${tests})`, [organisationId, ...slice.flatMap(c => [c, c])], transaction)
    }
    return { count }
  }
}

// The farm register (migration 0240) holds each farm's code: erased, it becomes the same opaque id as the visits'
// codes, so the farm's rounds stay linked for the models without anything leading back to the farm. After the
// retention purge it becomes the pseudonym, once none of the farm's visits keeps the code.
const farmRegister: PersonalDataSource = {
  label: 'The farm register: the farm code that links its visits across rounds',
  kind: 'names',
  eraseFarm: async ({ organisationId, farmCode, opaqueId, transaction }) => ({
    count: await update('UPDATE farms SET code = ?, updated_at = NOW(3) WHERE organisation_id = ? AND code = ?', [opaqueId, organisationId, farmCode], transaction)
  }),
  purgeRounds: async ({ organisationId, roundIds, transaction, now }) => {
    // Sync registers a batch's codes before storing it, so a batch that then failed, or a record answered 'conflict',
    // can leave a farm without any visit. Removed once a day old (no sync takes that long between the two steps);
    // not counted in the report, which counts what the due rounds held.
    await update(`DELETE f FROM farms f WHERE f.organisation_id = ? AND f.created_at < ? - INTERVAL 1 DAY
      AND NOT EXISTS (SELECT 1 FROM visits v WHERE v.farm_id = f.id)
      AND NOT EXISTS (SELECT 1 FROM visits v WHERE v.organisation_id = f.organisation_id AND v.farm_code = f.code)`, [organisationId, now], transaction)
    const farms = await select<{ id: number, code: string }>(`SELECT f.id, f.code FROM farms f WHERE f.organisation_id = ?
      AND EXISTS (SELECT 1 FROM visits v WHERE v.farm_id = f.id AND v.round_id IN (?))
      AND NOT EXISTS (SELECT 1 FROM visits v WHERE v.farm_id = f.id AND v.names_purged_at IS NULL)
      AND f.code NOT LIKE 'P-%' AND f.code NOT LIKE 'E-%' ORDER BY f.id FOR UPDATE`, [organisationId, roundIds], transaction)
    for (const f of farms) await update('UPDATE farms SET code = ?, updated_at = NOW(3) WHERE id = ?', [pseudonymOf(organisationId, f.code), f.id], transaction)
    return { count: farms.length }
  }
}

// The sample lists name the farm's head, say how to find the farm and may hold its position. Erased with the farm
// (the code becomes the same opaque id as its visits', so the weights still find the visit) and purged at retention
// (the code becomes the exports' pseudonym, as the visits' codes do).
const CLEAR_SAMPLE_NAMES = 'head_name = NULL, hint = NULL, lat = NULL, lon = NULL, outcome_note = NULL'
const sampleListNames: PersonalDataSource = {
  label: 'Sample lists: the heads\' names, locating hints and positions of the farms to visit',
  kind: 'names',
  eraseFarm: async ({ organisationId, farmCode, opaqueId, transaction }) => ({
    count: await update(`UPDATE sample_farms SET ${CLEAR_SAMPLE_NAMES}, farm_code = ?, names_purged_at = NOW(3) WHERE organisation_id = ? AND farm_code = ?`,
      [opaqueId, organisationId, farmCode], transaction)
  }),
  heldPerRound: async (organisationId, roundIds) => perRound(await select(`SELECT round_id AS roundId, COUNT(*) AS n FROM sample_farms
    WHERE organisation_id = ? AND round_id IN (?) AND names_purged_at IS NULL GROUP BY round_id`, [organisationId, roundIds])),
  purgeRounds: async ({ organisationId, roundIds, transaction, now }) => {
    const rows = await select<{ id: number, farmCode: string }>(`SELECT id, farm_code AS farmCode FROM sample_farms
      WHERE organisation_id = ? AND round_id IN (?) AND names_purged_at IS NULL ORDER BY id FOR UPDATE`, [organisationId, roundIds], transaction)
    for (const r of rows) {
      await update(`UPDATE sample_farms SET ${CLEAR_SAMPLE_NAMES}, farm_code = ?, names_purged_at = ? WHERE id = ?`, [pseudonymOf(organisationId, r.farmCode), now, r.id], transaction)
    }
    return { count: rows.length }
  }
}

/** Add a new holder of farmers' personal data here (and nowhere else). */
// Order matters for the purge: sources that find rows by farm code come before visitIdentifiers replaces the codes;
// the register after it, as it waits until no visit of the farm keeps the code.
export const PERSONAL_DATA_SOURCES: readonly PersonalDataSource[] = [visitPhotos, visitPositions, sentBackMail, visitAuditDetails, sampleListNames, visitIdentifiers, farmRegister]
