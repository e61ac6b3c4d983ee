import { MODEL_CAUTIONS } from '#shared/utils/cautions'
import { EXPORT_PRIVACY_NOTE } from '#shared/utils/privacy-words'
import { conditionText, isNoAnswer } from '#shared/utils/asking'
import { type Question, exportColumnsOf } from '#shared/utils/schemas/questionnaire'
import type { VisitExportQuery } from '#shared/utils/schemas/privacy'
import { ownValue } from '#shared/utils/schemas/safe-text'
import { QuestionnaireVersion, Village, Visit } from '../db/models'
import { pseudonymOf } from './pseudonyms'
import { SAMPLE_WEIGHT_EXPORT_COLUMN, SAMPLE_WEIGHT_EXPORT_MEANING, sampleWeightByVisit } from './sample-lists'

/**
 * How a visit export treats personal data. Pseudonymised (the default, for analysts): farm codes become the
 * organisation's stable pseudonyms, positions are rounded to `precision` decimals (or left out), free-text answers
 * are left out (they may name people). Identifying: farm codes, exact positions and free text, only with a stated
 * reason (the route audits it).
 */
export interface ExportMode { identifying: boolean, precision: VisitExportQuery['precision'] }
export const PSEUDONYMISED: ExportMode = { identifying: false, precision: '2' }

export function rounded(value: number | null, precision: ExportMode['precision']): string | number | null {
  if (value === null) return null
  return precision === 'none' ? null : value.toFixed(Number(precision))
}

/** The columns of the export in this mode: the fixed ones, then one per question it carries. */
function exportColumns(questions: Question[], mode: ExportMode) {
  const withPositions = mode.identifying || mode.precision !== 'none'
  const carried = questions.filter(q => mode.identifying || q.type !== 'text')
  const fixed: Array<[string, string, string]> = [
    ['visit_id', 'Identifier made on the tablet (UUID)', 'text'],
    ['village_code', 'Village code', 'text'],
    ['village', 'Village name', 'text'],
    mode.identifying
      ? ['farm_code', 'Farm code given by the programme (identifies the farm: handle as personal data)', 'text']
      : ['farm_pseudonym', 'The farm under a pseudonym: the same farm has the same pseudonym in every export of the organisation, and the farm code cannot be worked out from it', 'text'],
    ...(withPositions
      ? [
          ['lat', mode.identifying ? 'Latitude as recorded (WGS 84)' : `Latitude (WGS 84), rounded to ${mode.precision} decimal${mode.precision === '1' ? '' : 's'}`, 'number'],
          ['lon', mode.identifying ? 'Longitude as recorded (WGS 84)' : `Longitude (WGS 84), rounded to ${mode.precision} decimal${mode.precision === '1' ? '' : 's'}`, 'number']
        ] as Array<[string, string, string]>
      : []),
    ['saved_at', 'When the visit was saved (UTC, ISO 8601)', 'date-time'],
    ['questionnaire_version_id', 'The questionnaire version the visit was answered with', 'whole number'],
    [SAMPLE_WEIGHT_EXPORT_COLUMN, SAMPLE_WEIGHT_EXPORT_MEANING, 'number']
  ]
  return { fixed, carried, withPositions }
}

/**
 * The accepted visits of a round, one row each, with a column per question of the current questionnaire.
 * Household-level data: coordinators only. One rectangular table; the cautions travel in the read-me of the zip.
 */
export async function acceptedVisitsCsv(roundId: number, organisationId: number, currentVersionId: number | null, mode: ExportMode = PSEUDONYMISED): Promise<string> {
  const questions = await currentQuestions(currentVersionId)
  const { fixed, carried, withPositions } = exportColumns(questions, mode)
  const [visits, villages, versions] = await Promise.all([
    Visit.findAll({ where: { roundId, organisationId, reviewState: 'accepted' }, order: [['id', 'ASC']] }),
    Village.findAll({ where: { organisationId }, attributes: ['id', 'code', 'name'] }),
    QuestionnaireVersion.findAll({ where: { roundId }, attributes: ['id', 'definition'] })
  ])
  const village = new Map(villages.map(v => [v.id, v]))
  const weights = await sampleWeightByVisit(organisationId, roundId)
  // Which questions each version had: a question added later was neither asked nor "not asked" in older visits.
  const keysOf = new Map(versions.map(v => [v.id, new Set(v.definition.questions.map(q => q.key))]))
  return csvTable(
    [...fixed.map(([column]) => column), ...carried.flatMap(q => exportColumnsOf(q))],
    visits.map((v) => {
      const notAsked = new Set(v.notAsked ?? [])
      const had = keysOf.get(v.questionnaireVersionId)
      const answers = carried.flatMap(q => answerCells(q, ownValue(v.answers, q.key), had?.has(q.key) ? !notAsked.has(q.key) : null))
      // A purged or erased visit holds its pseudonym or its new id already: written as it is.
      const farm = mode.identifying || v.namesPurgedAt ? v.farmCode : pseudonymOf(organisationId, v.farmCode)
      const position = withPositions
        ? (mode.identifying ? [v.lat, v.lon] : [rounded(v.lat, mode.precision), rounded(v.lon, mode.precision)])
        : []
      return [v.id, village.get(v.villageId)?.code, village.get(v.villageId)?.name, farm, ...position, v.savedAt.toISOString(), v.questionnaireVersionId, weights.get(v.id) ?? null, ...answers]
    })
  )
}

/**
 * One question's cells, in the order of exportColumnsOf: yes/no as yes/no; a several-answer question as 1/0 per
 * option (empty when unanswered or not asked, never 0: no answer is not "not ticked"); and for a question with a
 * condition its `.asked` cell, 1 or 0 (empty when the visit's version did not have the question).
 */
export function answerCells(q: Question, value: unknown, asked: boolean | null): unknown[] {
  const own = q.type === 'several'
    ? q.options.map(o => Array.isArray(value) && !isNoAnswer(value) ? (value.includes(o.value) ? 1 : 0) : null)
    : [typeof value === 'boolean' ? (value ? 'yes' : 'no') : value]
  return q.askWhen ? [...own, asked === null ? null : asked ? 1 : 0] : own
}

/** The data dictionary of the export: what each column means, its type, unit and allowed answers. */
export async function dataDictionaryCsv(currentVersionId: number | null, mode: ExportMode = PSEUDONYMISED): Promise<string> {
  const questions = await currentQuestions(currentVersionId)
  const { fixed, carried } = exportColumns(questions, mode)
  const rows: unknown[][] = fixed.map(([column, meaning, type]) => [column, meaning, type, '', '', column === 'lat' || column === 'lon' || column === SAMPLE_WEIGHT_EXPORT_COLUMN ? 'no' : 'yes'])
  for (const q of carried) {
    // In the order of exportColumnsOf: the question's own column(s), then its `.asked` column.
    if (q.type === 'several') {
      for (const o of q.options) rows.push([`${q.key}.${o.value}`, `${q.label}: ${o.label} (1 ticked, 0 not ticked; empty when not answered or not asked)`, '0/1', '', '0; 1', 'no'])
    }
    else {
      const allowed = q.type === 'choice'
        ? q.options.map(o => `${o.value} = ${o.label}`).join('; ')
        : q.type === 'yesno'
          ? 'yes; no'
          : (q.type === 'number' || q.type === 'whole')
              ? [q.min !== undefined ? `min ${q.min}` : '', q.max !== undefined ? `max ${q.max}` : ''].filter(Boolean).join(', ')
              : ''
      const unit = q.type === 'number' || q.type === 'whole' ? q.unit ?? '' : ''
      rows.push([q.key, q.help ? `${q.label} (${q.help})` : q.label, q.type, unit, allowed, q.required ? (q.askWhen ? 'when asked' : 'yes') : 'no'])
    }
    if (q.askWhen) {
      rows.push([`${q.key}.asked`, `Whether "${q.label}" was asked at this farm (1) or not asked (0): asked only when ${conditionText(q.askWhen, questions)}`, '0/1', '', '0; 1', 'yes'])
    }
  }
  return csvTable(['column', 'meaning', 'type', 'unit', 'allowed answers', 'required'], rows)
}

/** The round's export in one zip: the visits, the dictionary of their columns, and a read-me with the cautions. */
export async function roundExportZip(round: { id: number, name: string, currentVersionId: number | null }, organisationId: number, mode: ExportMode = PSEUDONYMISED): Promise<Uint8Array> {
  const [visits, dictionary, groupFiles] = await Promise.all([
    acceptedVisitsCsv(round.id, organisationId, round.currentVersionId, mode),
    dataDictionaryCsv(round.currentVersionId, mode),
    groupExportFiles(round.id, organisationId, round.currentVersionId, mode)
  ])
  const readme = [
    `Furrowcast: accepted visits of the round "${round.name}"`,
    '',
    ...MODEL_CAUTIONS.map(c => `- ${c}`),
    '',
    mode.identifying
      ? 'This export identifies farms (farm codes, exact positions, free-text answers). It was made for a stated reason, recorded in the audit log: keep it only as long as that reason needs, share it with nobody else.'
      : `${EXPORT_PRIVACY_NOTE} Free-text answers are left out: they may name people.`,
    '',
    'Files (each one table, its header on the first row):',
    '- visits.csv: one row per accepted visit, one column per question; a question with several answers has one 0/1 column',
    '  per option (question.option), and a question asked only under a condition has a column question.asked (1 asked,',
    '  0 not asked): an empty answer with asked = 0 was not asked, with asked = 1 it was asked and left unanswered.',
    '- dictionary.csv: what each column of visits.csv means, its type, unit and allowed answers.',
    ...Object.keys(groupFiles).filter(f => !f.endsWith('-dictionary.csv')).map(f => `- ${f}: one row per ${f.slice(0, -4)} row of each visit, joined to visits.csv by visit_id (row_id, row_number); ${f.slice(0, -4)}-dictionary.csv says what its columns mean.`),
    ''
  ].join('\n')
  return zipFiles({ 'README.txt': readme, 'visits.csv': visits, 'dictionary.csv': dictionary, ...groupFiles })
}

async function currentQuestions(versionId: number | null): Promise<Question[]> {
  if (!versionId) return []
  return (await QuestionnaireVersion.findByPk(versionId))?.definition.questions ?? []
}
