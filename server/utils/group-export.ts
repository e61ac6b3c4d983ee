import { rowAsking } from '#shared/utils/schemas/group-rows'
import { rowsOf } from '#shared/utils/schemas/groups'
import { type Question, type QuestionGroup, exportColumnsOf } from '#shared/utils/schemas/questionnaire'
import { isNoAnswer } from '#shared/utils/asking'
import { ownValue } from '#shared/utils/schemas/safe-text'
import { QuestionnaireVersion, Village, Visit } from '../db/models'
import { pseudonymOf } from './pseudonyms'
import type { ExportMode } from './visit-export'

// A repeated group's rows (e.g. plots) as a second table beside visits.csv: one line per row, keyed by the visit's id
// (the same `visit_id` as visits.csv), the row's own id and its number within the visit. The farm is named exactly as
// in visits.csv in the same mode (pseudonym or code), so the two tables join either way. Free-text answers are left
// out unless the export identifies farms, as in visits.csv.

export interface GroupTable { group: QuestionGroup, questions: Question[] }

/** The current questionnaire's groups with the questions the export carries in this mode. */
export async function exportedGroups(currentVersionId: number | null, mode: ExportMode): Promise<{ top: Question[], groups: GroupTable[] }> {
  const definition = currentVersionId ? (await QuestionnaireVersion.findByPk(currentVersionId))?.definition : undefined
  return {
    top: definition?.questions ?? [],
    groups: (definition?.groups ?? []).map(group => ({ group, questions: group.questions.filter(q => mode.identifying || q.type !== 'text') }))
  }
}

/** The free-text questions inside groups, per questionnaire version. */
async function groupTextKeysByVersion(versionIds: number[]): Promise<Map<number, Set<string>>> {
  const versions = await QuestionnaireVersion.findAll({ where: { id: [...new Set(versionIds)] }, attributes: ['id', 'definition'] })
  return new Map(versions.map(v => [v.id, new Set((v.definition.groups ?? []).flatMap(g => g.questions.filter(q => q.type === 'text').map(q => q.key)))]))
}

function cellsOf(q: Question, value: unknown, asked: boolean | null): unknown[] {
  const own = q.type === 'several'
    ? q.options.map(o => Array.isArray(value) && !isNoAnswer(value) ? (value.includes(o.value) ? 1 : 0) : null)
    : [typeof value === 'boolean' ? (value ? 'yes' : 'no') : value]
  return q.askWhen ? [...own, asked === null ? null : asked ? 1 : 0] : own
}

/** One group's rows of the round's accepted visits (an empty table with its header when nobody answered it). */
export async function groupRowsCsv(roundId: number, organisationId: number, currentVersionId: number | null, groupKey: string, mode: ExportMode): Promise<string | null> {
  const { top, groups } = await exportedGroups(currentVersionId, mode)
  const table = groups.find(g => g.group.key === groupKey)
  if (!table) return null
  const [visits, villages] = await Promise.all([
    Visit.findAll({ where: { roundId, organisationId, reviewState: 'accepted' }, order: [['id', 'ASC']], attributes: ['id', 'villageId', 'farmCode', 'namesPurgedAt', 'answers', 'questionnaireVersionId'] }),
    Village.findAll({ where: { organisationId }, attributes: ['id', 'code'] })
  ])
  const village = new Map(villages.map(v => [v.id, v.code]))
  // A key that was free text in the visit's own version stays out of a pseudonymised table even when the current
  // version (whose questions make the columns) asks it as another kind: the stored answer may still be a name.
  const textInVersion = mode.identifying ? new Map<number, Set<string>>() : await groupTextKeysByVersion(visits.map(v => v.questionnaireVersionId))
  const farmColumn = mode.identifying ? 'farm_code' : 'farm_pseudonym'
  const lines: unknown[][] = []
  for (const v of visits) {
    const farm = mode.identifying || v.namesPurgedAt ? v.farmCode : pseudonymOf(organisationId, v.farmCode)
    rowsOf(v.answers, groupKey).forEach((row, i) => {
      const { asked } = rowAsking(top, table.group, v.answers, row)
      lines.push([v.id, ownValue(row, 'row'), i + 1, village.get(v.villageId), farm, v.questionnaireVersionId,
        ...table.questions.flatMap(q => cellsOf(q, textInVersion.get(v.questionnaireVersionId)?.has(q.key) ? null : ownValue(row, q.key), asked.has(q.key)))])
    })
  }
  return csvTable(['visit_id', 'row_id', 'row_number', 'village_code', farmColumn, 'questionnaire_version_id', ...table.questions.flatMap(q => exportColumnsOf(q))], lines)
}

/** The dictionary of a group's table, in the same columns as dictionary.csv. */
export function groupDictionaryRows(table: GroupTable, mode: ExportMode): unknown[][] {
  const rows: unknown[][] = [
    ['visit_id', 'The visit this row belongs to (visit_id of visits.csv)', 'text', '', '', 'yes'],
    ['row_id', `Identifier of this row of "${table.group.label}", made on the tablet (UUID)`, 'text', '', '', 'yes'],
    ['row_number', 'The row\'s place within its visit (1, 2, …)', 'whole number', '', '', 'yes'],
    ['village_code', 'Village code', 'text', '', '', 'yes'],
    mode.identifying ? ['farm_code', 'Farm code (identifies the farm: handle as personal data)', 'text', '', '', 'yes'] : ['farm_pseudonym', 'The farm under the same pseudonym as in visits.csv', 'text', '', '', 'yes'],
    ['questionnaire_version_id', 'The questionnaire version the visit was answered with', 'whole number', '', '', 'yes']
  ]
  for (const q of table.questions) {
    if (q.type === 'several') {
      for (const o of q.options) rows.push([`${q.key}.${o.value}`, `${q.label}: ${o.label} (1 ticked, 0 not ticked)`, '0/1', '', '0; 1', 'no'])
    }
    else {
      const allowed = q.type === 'choice' ? q.options.map(o => `${o.value} = ${o.label}`).join('; ') : q.type === 'yesno' ? 'yes; no' : ''
      const unit = q.type === 'number' || q.type === 'whole' ? q.unit ?? '' : ''
      rows.push([q.key, q.help ? `${q.label} (${q.help})` : q.label, q.type, unit, allowed, q.required ? (q.askWhen ? 'when asked' : 'yes') : 'no'])
    }
    if (q.askWhen) rows.push([`${q.key}.asked`, `Whether "${q.label}" was asked for this row (1) or not (0)`, '0/1', '', '0; 1', 'yes'])
  }
  return rows
}

/** Files the round's zip gains for its groups: `<group>.csv` and `<group>-dictionary.csv` each. */
export async function groupExportFiles(roundId: number, organisationId: number, currentVersionId: number | null, mode: ExportMode): Promise<Record<string, string>> {
  const { groups } = await exportedGroups(currentVersionId, mode)
  const files: Record<string, string> = {}
  for (const table of groups) {
    files[`${table.group.key}.csv`] = (await groupRowsCsv(roundId, organisationId, currentVersionId, table.group.key, mode))!
    files[`${table.group.key}-dictionary.csv`] = csvTable(['column', 'meaning', 'type', 'unit', 'allowed answers', 'required'], groupDictionaryRows(table, mode))
  }
  return files
}
