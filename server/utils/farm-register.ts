import { QueryTypes, type Transaction } from 'sequelize'
import { database } from '../db/connection'
import { normalisedFarmCode } from './pseudonyms'

// The farm register (migration 0240): every farm code of an organisation is one registered farm with a home
// village, so a farm visited in several rounds is recognised as the same farm. A visit is linked to the farm of its
// code when it is stored (sync, CSV import) and when a reviewer corrects its farm code.
//
// The village check: a code already registered in ANOTHER village is more likely a typing slip (or a code reused by
// two villages) than a farm that moved, so the visit is stored but NOT linked, and flagged `farmInOtherVillage`
// (the home village's name) for a reviewer, who corrects the farm code or accepts it unlinked. Refusing it instead
// would lose an interview done in good faith on a tablet that may not sync again for days.
//
// Sync registers a batch's codes BEFORE its transaction (farmsOfCodes) and writes farm_id and the flag in the batch's
// own INSERT; import and review corrections link what is already stored (linkVisitsToFarms).

/** A registered farm as a visit's link needs it: its id and its home village. */
export interface RegisteredFarm {
  id: number
  villageId: number
  villageName: string
}

async function registeredFarms(organisationId: number, codes: string[]): Promise<Map<string, RegisteredFarm>> {
  const rows = await database().query<RegisteredFarm & { code: string }>(`SELECT f.id, f.code, f.village_id AS villageId, h.name AS villageName
    FROM farms f JOIN villages h ON h.id = f.village_id WHERE f.organisation_id = ? AND f.code IN (?)`,
  { replacements: [organisationId, codes], type: QueryTypes.SELECT })
  return new Map(rows.map(({ code, ...farm }) => [normalisedFarmCode(code), farm]))
}

/**
 * The registered farm of each code of these visits (keyed by normalisedFarmCode), registering the codes not yet known
 * first, each with the village of its first visit in the order given as its home village. Idempotent, and outside
 * any transaction: a concurrent batch registering the same code keeps the first registration.
 *
 * The codes are looked up with `code IN (…)` on the (organisation_id, code) index and paired here by the collation's
 * rule (case and surrounding spaces ignored; codes are ASCII by their schema). Joining a list of codes built inside
 * SQL (JSON_TABLE) to farms could not use that index, and doubled MariaDB's cost per synced visit.
 */
export async function farmsOfCodes(organisationId: number, visits: Array<{ farmCode: string, villageId: number }>): Promise<Map<string, RegisteredFarm>> {
  const homes = new Map<string, { code: string, villageId: number }>()
  for (const v of visits) {
    const key = normalisedFarmCode(v.farmCode)
    if (!homes.has(key)) homes.set(key, { code: v.farmCode, villageId: v.villageId })
  }
  if (!homes.size) return new Map()
  const farms = await registeredFarms(organisationId, [...homes.values()].map(h => h.code))
  // In key order, so two batches registering some of the same codes take their locks in the same order.
  const missing = [...homes].filter(([key]) => !farms.has(key)).sort(([a], [b]) => a < b ? -1 : a > b ? 1 : 0).map(([, home]) => home)
  if (!missing.length) return farms
  await database().query(`INSERT INTO farms (organisation_id, code, village_id, created_at, updated_at)
    VALUES ${missing.map(() => '(?, ?, ?, NOW(3), NOW(3))').join(', ')} ON DUPLICATE KEY UPDATE farms.id = farms.id`,
  { replacements: missing.flatMap(h => [organisationId, h.code, h.villageId]), type: QueryTypes.INSERT })
  for (const [key, farm] of await registeredFarms(organisationId, missing.map(h => h.code))) farms.set(key, farm)
  return farms
}

export interface LinkScope {
  organisationId: number
  roundIds: number[]
  farmCodes: string[]
}

/**
 * Registers the codes not yet known (home village = the village of the code's earliest visit among these) and links
 * the visits of these rounds with these codes, flagging those whose village differs from the farm's home village.
 * Idempotent: sync runs it again on every resend, so a crash between the batch's commit and here loses nothing.
 * Returns the ids of the visits left unlinked for their village (unless `report` is false: sync needs none).
 */
export async function linkVisitsToFarms(scope: LinkScope, transaction?: Transaction, options: { report?: boolean } = {}): Promise<string[]> {
  const codes = [...new Set(scope.farmCodes)]
  const rounds = [...new Set(scope.roundIds)]
  if (!codes.length || !rounds.length) return []
  const replacements = { org: scope.organisationId, rounds, codes }
  await database().query(`INSERT INTO farms (organisation_id, code, village_id, created_at, updated_at)
    SELECT organisation_id, farm_code, village_id, NOW(3), NOW(3) FROM visits
    WHERE organisation_id = :org AND round_id IN (:rounds) AND farm_code IN (:codes)
    ORDER BY saved_at, id
    ON DUPLICATE KEY UPDATE farms.id = farms.id`, { replacements, type: QueryTypes.INSERT, transaction })
  // One pass links the visits of the farm's home village and flags the others (named by the home village); rows
  // already as they should be are not written again. (It runs after every sync batch: two passes and a read had
  // doubled MariaDB's cost per stored visit.)
  await database().query(`UPDATE visits v JOIN farms f ON f.organisation_id = v.organisation_id AND f.code = v.farm_code
    JOIN villages h ON h.id = f.village_id
    SET v.farm_id = IF(f.village_id = v.village_id, f.id, NULL),
      v.flags = IF(f.village_id = v.village_id, JSON_REMOVE(v.flags, '$.farmInOtherVillage'), JSON_SET(v.flags, '$.farmInOtherVillage', h.name))
    WHERE v.organisation_id = :org AND v.round_id IN (:rounds) AND v.farm_code IN (:codes)
      AND IF(f.village_id = v.village_id,
        v.farm_id IS NULL OR v.farm_id <> f.id OR JSON_EXISTS(v.flags, '$.farmInOtherVillage'),
        v.farm_id IS NOT NULL OR NOT JSON_EXISTS(v.flags, '$.farmInOtherVillage') OR JSON_VALUE(v.flags, '$.farmInOtherVillage') <> h.name)`,
  { replacements, type: QueryTypes.UPDATE, transaction })
  if (options.report === false) return []
  const unlinked = await database().query<{ id: string }>(`SELECT id FROM visits WHERE organisation_id = :org AND round_id IN (:rounds)
    AND farm_code IN (:codes) AND farm_id IS NULL`, { replacements, type: QueryTypes.SELECT, transaction })
  return unlinked.map(r => r.id)
}

/** One earlier (or later) visit of the same registered farm, as review shows it. */
export interface FarmRoundVisit {
  visitId: string
  roundId: number
  roundName: string
  savedAt: string
  adopted: number
  reviewState: string
  villageName: string
  answers: Record<string, unknown>
  questionnaireVersionId: number
}

/** The other rounds' visits of the farm this visit is linked to, oldest first (none for an unlinked visit). */
export async function otherRoundsOfVisit(organisationId: number, visitId: string): Promise<{ farmLinked: boolean, visits: FarmRoundVisit[] } | null> {
  const [visit] = await database().query<{ farmId: number | null, roundId: number }>(
    'SELECT farm_id AS farmId, round_id AS roundId FROM visits WHERE id = ? AND organisation_id = ?',
    { replacements: [visitId, organisationId], type: QueryTypes.SELECT })
  if (!visit) return null
  if (visit.farmId === null) return { farmLinked: false, visits: [] }
  const rows = await database().query<Omit<FarmRoundVisit, 'answers' | 'savedAt'> & { answers: string | Record<string, unknown>, savedAt: Date }>(
    `SELECT v.id AS visitId, v.round_id AS roundId, r.name AS roundName, v.saved_at AS savedAt, v.adopted, v.review_state AS reviewState,
      g.name AS villageName, v.answers, v.questionnaire_version_id AS questionnaireVersionId
    FROM visits v JOIN rounds r ON r.id = v.round_id JOIN villages g ON g.id = v.village_id
    WHERE v.farm_id = ? AND v.organisation_id = ? AND v.round_id <> ? ORDER BY v.saved_at, v.id LIMIT 50`,
    { replacements: [visit.farmId, organisationId, visit.roundId], type: QueryTypes.SELECT })
  return {
    farmLinked: true,
    visits: rows.map(r => ({
      ...r,
      adopted: Number(r.adopted),
      savedAt: new Date(r.savedAt).toISOString(),
      answers: typeof r.answers === 'string' ? JSON.parse(r.answers) as Record<string, unknown> : r.answers
    }))
  }
}
