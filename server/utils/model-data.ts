import { createHash } from 'node:crypto'
import { Op } from 'sequelize'
import type { ModelQuestion } from '#shared/utils/modelling/questions'
import { VILLAGE_COLUMN } from '#shared/utils/modelling/spec-builder'
import { ownValue } from '#shared/utils/schemas/safe-text'
import type { DataColumns, ModelSpec } from '#shared/utils/stats'
import { OUTCOME_KEY } from '#shared/utils/schemas/questionnaire'
import { QuestionnaireVersion, Round, Village, Visit } from '../db/models'
import type { ExcludedVisits } from '../db/models/model-run'

export interface RoundModelData {
  round: Round
  questions: ModelQuestion[]
  rows: AcceptedVisitRow[]
  rowsHash: string
  questionnaireVersionIds: number[]
  excluded: ExcludedVisits
  villageNames: Record<string, string>
}

const isMissing = (v: unknown) => v === null || v === undefined || v === '' || v === 'NA'

function hashRows(rows: readonly AcceptedVisitRow[]): string {
  const hash = createHash('sha256')
  for (const r of rows) hash.update(`${r.visitId}|${r.villageCode}|${r.adopted}|${JSON.stringify(r.answers)}\n`)
  return hash.digest('hex')
}

/** The round (of this organisation), its questions and its accepted visits; 404 for another organisation's round. */
export async function modelDataForRound(roundId: number, organisationId: number): Promise<RoundModelData> {
  const round = await Round.findOne({ where: { id: roundId, organisationId } })
  if (!round) throw createError({ statusCode: 404, message: 'No such survey round.' })
  const version = round.currentVersionId ? await QuestionnaireVersion.findByPk(round.currentVersionId) : null
  const questions = (version?.definition.questions ?? []) as ModelQuestion[]
  const rows = await acceptedVisitsForRound(roundId, organisationId)
  const notAcceptedRows = await Visit.findAll({
    where: { roundId, organisationId, reviewState: { [Op.ne]: 'accepted' } },
    attributes: ['reviewState']
  })
  const notAccepted: Record<string, number> = {}
  for (const v of notAcceptedRows) notAccepted[v.reviewState] = (notAccepted[v.reviewState] ?? 0) + 1
  const villages = await Village.findAll({ where: { organisationId }, attributes: ['code', 'name'] })
  return {
    round,
    questions,
    rows,
    rowsHash: hashRows(rows),
    questionnaireVersionIds: [...new Set(rows.map(r => r.questionnaireVersion))].sort((a, b) => a - b),
    excluded: { notAccepted },
    villageNames: Object.fromEntries(villages.map(v => [v.code, v.name]))
  }
}

/** Column-oriented data for the engine: the outcome, the village and every answer the specification uses. */
export function columnsFor(spec: ModelSpec, rows: readonly AcceptedVisitRow[]): DataColumns {
  const columns: Record<string, unknown[]> = {
    [OUTCOME_KEY]: rows.map(r => r.adopted),
    [VILLAGE_COLUMN]: rows.map(r => r.villageCode)
  }
  const keys = new Set([...spec.covariates.map(c => c.name), ...(spec.weights ? [spec.weights] : [])])
  for (const key of keys) columns[key] = rows.map(r => ownValue(r.answers, key) ?? null)
  return columns
}

/** Hash of the rows a specification keeps after listwise deletion, by the engine's own rule for "missing". */
export function usedRowsHash(spec: ModelSpec, rows: readonly AcceptedVisitRow[]): string {
  const keys = [...spec.covariates.map(c => c.name), ...(spec.weights ? [spec.weights] : [])]
  return hashRows(rows.filter(r => keys.every(k => !isMissing(ownValue(r.answers, k)))))
}
