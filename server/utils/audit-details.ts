import type { AuditEntry } from '../db/models'
import { QuestionnaireVersion, Round, User, Village, Visit, ModelRun, Publication, Organisation } from '../db/models'
import type { Question } from '#shared/utils/schemas/questionnaire'

const ROLE_WORDS: Record<string, string> = { admin: 'Admin', coordinator: 'Coordinator', enumerator: 'Enumerator', funder: 'Funder' }
const REASONS: Record<string, string> = {
  deactivated: 'the account is deactivated',
  expired: 'the link had expired',
  used: 'the link was already used',
  replaced: 'a newer link replaced it',
  invalid: 'the link was not valid'
}
const SETTING_WORDS: Record<string, string> = {
  name: 'organisation name',
  defaultClusterVariable: 'cluster variable',
  minVisitsForFunders: 'minimum visits for funders',
  funderOrganisations: 'funder organisations'
}

function shown(value: unknown, question?: Question): string {
  if (value === null || value === undefined || value === '') return '—'
  if (value === true) return 'Yes'
  if (value === false) return 'No'
  if (question && (question.type === 'number' || question.type === 'whole') && question.unit) return `${value} ${question.unit}`
  if (question?.type === 'choice') return question.options.find(o => o.value === value)?.label ?? String(value)
  if (question?.type === 'several' && Array.isArray(value)) return value.map(v => question.options.find(o => o.value === v)?.label ?? String(v)).join(', ') || '—'
  return typeof value === 'object' ? JSON.stringify(value) : String(value)
}

/** Names of the records the entries point at (a person's name, a round's name, a visit's farm code), by "type:id". */
export async function recordNamesOf(organisationId: number, entries: AuditEntry[]): Promise<Map<string, string>> {
  const ids = (type: string) => [...new Set(entries.filter(e => e.entityType === type && e.entityId).map(e => e.entityId!))]
  const [users, rounds, villages, visits, runs, publications, organisations] = await Promise.all([
    User.findAll({ where: { id: ids('user'), organisationId }, attributes: ['id', 'name', 'email'] }),
    Round.findAll({ where: { id: ids('round'), organisationId }, attributes: ['id', 'name'] }),
    Village.findAll({ where: { id: ids('village'), organisationId }, attributes: ['id', 'name'] }),
    Visit.findAll({ where: { id: ids('visit'), organisationId }, attributes: ['id', 'farmCode', 'questionnaireVersionId'] }),
    ModelRun.findAll({ where: { id: ids('model_run') }, attributes: ['id', 'roundId'] }),
    Publication.findAll({ where: { id: ids('publication') }, attributes: ['id', 'roundId'] }),
    Organisation.findAll({ where: { id: ids('organisation').filter(id => Number(id) === organisationId) }, attributes: ['id', 'name'] })
  ])
  const roundNames = await Round.findAll({ where: { id: [...runs, ...publications].map(r => r.roundId), organisationId }, attributes: ['id', 'name'] })
  const names = new Map<string, string>()
  for (const u of users) names.set(`user:${u.id}`, u.name || u.email)
  for (const r of rounds) names.set(`round:${r.id}`, r.name)
  for (const v of villages) names.set(`village:${v.id}`, v.name)
  for (const v of visits) names.set(`visit:${v.id}`, `Farm ${v.farmCode}`)
  for (const r of runs) names.set(`model_run:${r.id}`, `Fit of ${roundNames.find(x => x.id === r.roundId)?.name ?? 'a round'}`)
  for (const p of publications) names.set(`publication:${p.id}`, `Publication of ${roundNames.find(x => x.id === p.roundId)?.name ?? 'a round'}`)
  for (const o of organisations) names.set(`organisation:${o.id}`, o.name)
  return names
}

/** The questions of the versions the corrected visits were answered with, so corrections name questions by label. */
export async function correctionQuestionsOf(organisationId: number, entries: AuditEntry[]): Promise<Map<string, Question[]>> {
  const visitIds = entries.filter(e => e.action === 'visit.correct' && e.entityId).map(e => e.entityId!)
  const out = new Map<string, Question[]>()
  if (!visitIds.length) return out
  const visits = await Visit.findAll({ where: { id: visitIds, organisationId }, attributes: ['id', 'questionnaireVersionId'] })
  const versions = await QuestionnaireVersion.findAll({ where: { id: [...new Set(visits.map(v => v.questionnaireVersionId))] } })
  for (const v of visits) out.set(v.id, versions.find(x => x.id === v.questionnaireVersionId)?.definition.questions ?? [])
  return out
}

/** The details of one entry as lines a person reads: old → new role, each corrected answer's old → new value, the reason. */
export function detailLines(entry: AuditEntry, questions: Question[] = []): string[] {
  const d = (entry.details ?? {}) as Record<string, unknown>
  const lines: string[] = []
  const label = (key: string) => questions.find(q => q.key === key)?.label ?? 'An answer'
  switch (entry.action) {
    case 'user.role_changed':
      lines.push(`Role: ${ROLE_WORDS[String(d.from)] ?? d.from} → ${ROLE_WORDS[String(d.to)] ?? d.to}`)
      break
    case 'user.invited':
    case 'user.reinvited':
      if (d.role) lines.push(`Role: ${ROLE_WORDS[String(d.role)] ?? d.role}`)
      break
    case 'visit.correct': {
      const before = (d.before ?? {}) as Record<string, unknown>
      const after = (d.after ?? {}) as Record<string, unknown>
      for (const key of Object.keys({ ...before, ...after })) {
        const q = questions.find(x => x.key === key)
        lines.push(`${label(key)}: ${shown(before[key], q)} → ${shown(after[key], q)}`)
      }
      break
    }
    case 'round.open':
    case 'round.closed':
    case 'round.reopen':
      break
    case 'round.target':
      lines.push(`Target: ${shown(d.from)} → ${shown(d.to)} visits per village`)
      break
    case 'round.villages':
      if (Array.isArray(d.villageIds)) lines.push(`${d.villageIds.length} villages`)
      break
    case 'round.assignments':
    case 'visit.bulk_accept':
      if (d.count !== undefined) lines.push(`${d.count} ${entry.action === 'visit.bulk_accept' ? 'visits' : 'assignments'}`)
      break
    case 'questionnaire.save':
      lines.push(`Version ${d.version}, ${d.questions} questions`)
      break
    case 'settings.updated':
      if (Array.isArray(d.changed)) lines.push(`Changed: ${d.changed.map(k => SETTING_WORDS[String(k)] ?? String(k)).join(', ')}`)
      break
    case 'model.fit':
      if (d.link) lines.push(`Link: ${d.link}`)
      break
    case 'model.scenario':
      if (Array.isArray(d.names)) lines.push(`Scenarios: ${d.names.join(', ')}`)
      break
    case 'round.export':
    case 'round.export_identifying':
      if (d.part) lines.push(`Part: ${d.part}${d.precision ? `, positions: ${d.precision === 'none' ? 'left out' : `${d.precision} decimals`}` : ''}`)
      break
    case 'field_device.set_up':
      if (d.label) lines.push(`Tablet: ${shown(d.label)}`)
      break
    case 'field_device.revoked':
      lines.push(`Tablet: ${shown(d.label)} of ${shown(d.email)}; ${shown(d.sessionsEnded)} sessions ended`)
      break
    case 'farm.erase':
      lines.push(`${shown(d.visits)} visits and ${shown(d.photos)} photos; the farm is now ${shown(d.opaqueId)}${d.keptAnswers ? ' (non-identifying answers kept)' : ' (visits deleted)'}`)
      break
    case 'retention.purge': {
      const counts = (d.counts ?? {}) as Record<string, unknown>
      lines.push(`Photos ${shown(counts.photos)}, positions ${shown(counts.gps)}, names ${shown(counts.names)} in ${shown(d.rounds)} rounds${d.scheduled ? ' (scheduled check)' : ''}`)
      break
    }
    default:
      break
  }
  if (typeof d.reason === 'string' && d.reason) lines.push(`Why: ${REASONS[d.reason] ?? d.reason}`)
  if (typeof d.removed === 'string') lines.push(`Details removed: ${d.removed}`)
  return lines
}
