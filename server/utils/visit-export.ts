import { MODEL_CAUTIONS } from '#shared/utils/cautions'
import type { Question } from '#shared/utils/schemas/questionnaire'
import { ownValue } from '#shared/utils/schemas/safe-text'
import { QuestionnaireVersion, Village, Visit } from '../db/models'

/**
 * The accepted visits of a round, one row each, with a column per question of the current questionnaire.
 * Household-level data: coordinators only. One rectangular table; the cautions travel in the read-me of the zip.
 */
export async function acceptedVisitsCsv(roundId: number, organisationId: number, currentVersionId: number | null): Promise<string> {
  const questions = await currentQuestions(currentVersionId)
  const [visits, villages] = await Promise.all([
    Visit.findAll({ where: { roundId, organisationId, reviewState: 'accepted' }, order: [['id', 'ASC']] }),
    Village.findAll({ where: { organisationId }, attributes: ['id', 'code', 'name'] })
  ])
  const village = new Map(villages.map(v => [v.id, v]))
  return csvTable(
    ['visit_id', 'village_code', 'village', 'farm_code', 'saved_at', 'questionnaire_version_id', ...questions.map(q => q.key)],
    visits.map((v) => {
      const answers = questions.map((q) => {
        const value = ownValue(v.answers, q.key)
        return typeof value === 'boolean' ? (value ? 'yes' : 'no') : value
      })
      return [v.id, village.get(v.villageId)?.code, village.get(v.villageId)?.name, v.farmCode, v.savedAt.toISOString(), v.questionnaireVersionId, ...answers]
    })
  )
}

/** The data dictionary of the export: what each column means, its type, unit and allowed answers. */
export async function dataDictionaryCsv(currentVersionId: number | null): Promise<string> {
  const questions = await currentQuestions(currentVersionId)
  const fixed: Array<[string, string, string]> = [
    ['visit_id', 'Identifier made on the tablet (UUID)', 'text'],
    ['village_code', 'Village code', 'text'],
    ['village', 'Village name', 'text'],
    ['farm_code', 'Farm code given by the programme', 'text'],
    ['saved_at', 'When the visit was saved (UTC, ISO 8601)', 'date-time'],
    ['questionnaire_version_id', 'The questionnaire version the visit was answered with', 'whole number']
  ]
  const rows: unknown[][] = fixed.map(([column, meaning, type]) => [column, meaning, type, '', '', 'yes'])
  for (const q of questions) {
    const allowed = q.type === 'choice'
      ? q.options.map(o => `${o.value} = ${o.label}`).join('; ')
      : q.type === 'yesno'
        ? 'yes; no'
        : (q.type === 'number' || q.type === 'whole')
            ? [q.min !== undefined ? `min ${q.min}` : '', q.max !== undefined ? `max ${q.max}` : ''].filter(Boolean).join(', ')
            : ''
    const unit = q.type === 'number' || q.type === 'whole' ? q.unit ?? '' : ''
    rows.push([q.key, q.help ? `${q.label} (${q.help})` : q.label, q.type, unit, allowed, q.required ? 'yes' : 'no'])
  }
  return csvTable(['column', 'meaning', 'type', 'unit', 'allowed answers', 'required'], rows)
}

/** The round's export in one zip: the visits, the dictionary of their columns, and a read-me with the cautions. */
export async function roundExportZip(round: { id: number, name: string, currentVersionId: number | null }, organisationId: number): Promise<Uint8Array> {
  const [visits, dictionary] = await Promise.all([acceptedVisitsCsv(round.id, organisationId, round.currentVersionId), dataDictionaryCsv(round.currentVersionId)])
  const readme = [
    `Furrowcast: accepted visits of the round "${round.name}"`,
    '',
    ...MODEL_CAUTIONS.map(c => `- ${c}`),
    '',
    'Files (each one table, its header on the first row):',
    '- visits.csv: one row per accepted visit, one column per question.',
    '- dictionary.csv: what each column of visits.csv means, its type, unit and allowed answers.',
    ''
  ].join('\n')
  return zipFiles({ 'README.txt': readme, 'visits.csv': visits, 'dictionary.csv': dictionary })
}

async function currentQuestions(versionId: number | null): Promise<Question[]> {
  if (!versionId) return []
  return (await QuestionnaireVersion.findByPk(versionId))?.definition.questions ?? []
}
