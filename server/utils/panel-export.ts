import { QueryTypes } from 'sequelize'
import { MODEL_CAUTIONS } from '#shared/utils/cautions'
import { EXPORT_PRIVACY_NOTE } from '#shared/utils/privacy-words'
import { exportColumnsOf, type Question } from '#shared/utils/schemas/questionnaire'
import { ownValue } from '#shared/utils/schemas/safe-text'
import { database } from '../db/connection'
import { pseudonymOf } from './pseudonyms'
import type { RoundFamily } from './round-family'
import { answerCells, rounded, type ExportMode } from './visit-export'

// The panel export: one row per registered farm × round, over several rounds of one questionnaire family, with the
// questions the rounds share. Only visits linked to the farm register count (a visit flagged for a farm code of
// another village is not linked), and of a farm's accepted visits in one round the latest saved one (a second visit
// of a farm in a round is a duplicate the review flags).

interface PanelVisit {
  farmCode: string
  purged: Date | null
  roundId: number
  villageCode: string
  villageName: string
  lat: number | null
  lon: number | null
  savedAt: Date
  answers: string | Record<string, unknown>
  notAsked: string | string[] | null
}

/** The latest accepted, linked visit of each farm in each of the rounds: the rows of a panel. */
export const LATEST_OF_FARM_IN_ROUND = `NOT EXISTS (SELECT 1 FROM visits w WHERE w.farm_id = v.farm_id AND w.round_id = v.round_id
  AND w.review_state = 'accepted' AND (w.saved_at > v.saved_at OR (w.saved_at = v.saved_at AND w.id > v.id)))`

function columnsOf(questions: Question[], mode: ExportMode) {
  const withPositions = mode.identifying || mode.precision !== 'none'
  const carried = questions.filter(q => mode.identifying || q.type !== 'text')
  const header = [
    mode.identifying ? 'farm_code' : 'farm_pseudonym',
    'round_number', 'round', 'village_code', 'village',
    ...(withPositions ? ['lat', 'lon'] : []),
    'saved_at',
    ...carried.flatMap(q => exportColumnsOf(q))
  ]
  return { header, carried, withPositions }
}

export async function panelCsv(family: RoundFamily, organisationId: number, mode: ExportMode): Promise<{ csv: string, rows: number, farms: number }> {
  const { header, carried, withPositions } = columnsOf(family.questions, mode)
  const visits = await database().query<PanelVisit>(`SELECT f.code AS farmCode, v.names_purged_at AS purged, v.round_id AS roundId,
      g.code AS villageCode, g.name AS villageName, v.lat, v.lon, v.saved_at AS savedAt, v.answers, v.not_asked AS notAsked
    FROM visits v JOIN farms f ON f.id = v.farm_id JOIN villages g ON g.id = v.village_id
    JOIN rounds r ON r.id = v.round_id
    WHERE v.organisation_id = ? AND v.round_id IN (?) AND v.review_state = 'accepted' AND ${LATEST_OF_FARM_IN_ROUND}
    ORDER BY f.id, r.created_at, r.id`, { replacements: [organisationId, family.rounds.map(r => r.id)], type: QueryTypes.SELECT })
  const roundOf = new Map(family.rounds.map(r => [r.id, r]))
  const json = <T>(v: string | T): T => (typeof v === 'string' ? JSON.parse(v) as T : v)
  const farms = new Set<string>()
  const rows = visits.map((v) => {
    const round = roundOf.get(Number(v.roundId))!
    const answers = json<Record<string, unknown>>(v.answers)
    const notAsked = new Set(json<string[] | null>(v.notAsked ?? null) ?? [])
    // The register's code, so every round of a farm carries the same value. A purged visit holds the farm's
    // pseudonym (or an erased farm's id), which the register has too once every visit is purged; while the register
    // still holds the code, a purged visit's row gets the pseudonym even in the identifying export (the purge stands).
    const replaced = /^[PE]-[0-9a-f]{12}$/.test(v.farmCode)
    const farm = replaced || (mode.identifying && !v.purged) ? v.farmCode : pseudonymOf(organisationId, v.farmCode)
    farms.add(farm)
    const position = withPositions
      ? (mode.identifying ? [v.lat, v.lon] : [rounded(v.lat, mode.precision), rounded(v.lon, mode.precision)])
      : []
    return [farm, round.order, round.name, v.villageCode, v.villageName, ...position, new Date(v.savedAt).toISOString(),
      ...carried.flatMap(q => answerCells(q, ownValue(answers, q.key), q.askWhen ? !notAsked.has(q.key) : true))]
  })
  return { csv: csvTable(header, rows), rows: rows.length, farms: farms.size }
}

export async function panelZip(family: RoundFamily, organisationId: number, mode: ExportMode): Promise<Uint8Array> {
  const { csv } = await panelCsv(family, organisationId, mode)
  const readme = [
    'Furrowcast: the same farms across rounds (one row per farm and round)',
    '',
    'Rounds, in order:',
    ...family.rounds.map(r => `  ${r.order}. ${r.name}`),
    '',
    ...MODEL_CAUTIONS.map(c => `- ${c}`),
    '',
    mode.identifying
      ? 'This export identifies farms (farm codes, exact positions, free-text answers). It was made for a stated reason, recorded in the audit log: keep it only as long as that reason needs, share it with nobody else.'
      : `${EXPORT_PRIVACY_NOTE} Free-text answers are left out: they may name people.`,
    '',
    'panel.csv: one row per farm of the farm register and round in which it has an accepted visit (the latest one',
    'when a round has two); a farm seen in one round only has one row. The columns after saved_at are the questions',
    'every chosen round has (same key, same kind of answer), as in the visits export. Visits whose farm code is',
    'registered in another village are not in it until a reviewer corrects the code.',
    ''
  ].join('\n')
  return zipFiles({ 'README.txt': readme, 'panel.csv': csv })
}
