import { Op, type WhereOptions } from 'sequelize'
import type { AuditQuery } from '#shared/utils/schemas/listing'
import type { AuditRow, Page } from '#shared/types/listing'
import { AuditEntry } from '../db/models'
import { AUDIT_RECORD_TYPES, auditActionLabel, csvField } from '#shared/utils/audit-words'
import { correctionQuestionsOf, detailLines, recordNamesOf } from './audit-details'
import { auditSearchWhere } from './audit-search'

/** The organisation's audit entries, newest first. Failed sign-ins for unknown e-mails have no organisation. */
async function whereOf(organisationId: number, query: Omit<AuditQuery, 'page' | 'pageSize'>) {
  const where: WhereOptions<AuditEntry> = { organisationId }
  // The action list offers whole actions: "signin" must not also bring "signin.failed".
  if (query.action) Object.assign(where, { action: query.action })
  if (query.q) Object.assign(where, await auditSearchWhere(organisationId, query.q))
  if (query.actor) Object.assign(where, { actorEmail: { [Op.substring]: query.actor } })
  if (query.entity) Object.assign(where, { entityType: query.entity })
  // Days are whole UTC days: from 00:00 of `from` up to, not including, 00:00 after `to`.
  const range: Record<symbol, Date> = {}
  if (query.from) range[Op.gte] = new Date(`${query.from}T00:00:00Z`)
  if (query.to) range[Op.lt] = new Date(new Date(`${query.to}T00:00:00Z`).getTime() + 86_400_000)
  if (query.from || query.to) Object.assign(where, { createdAt: range })
  return where
}

async function rowsOf(organisationId: number, entries: AuditEntry[]): Promise<AuditRow[]> {
  const [names, questions] = await Promise.all([recordNamesOf(organisationId, entries), correctionQuestionsOf(organisationId, entries)])
  return entries.map((entry) => {
    const type = entry.entityType ? AUDIT_RECORD_TYPES[entry.entityType] ?? 'Record' : null
    const name = entry.entityType && entry.entityId ? names.get(`${entry.entityType}:${entry.entityId}`) : undefined
    return {
      id: Number(entry.id),
      at: entry.createdAt.toISOString(),
      actorEmail: entry.actorEmail,
      action: entry.action,
      entityType: entry.entityType,
      entityId: entry.entityId,
      ip: entry.ip,
      details: entry.details,
      actionLabel: auditActionLabel(entry.action),
      // A record since deleted (or of another organisation) keeps its type but shows no id: ids mean nothing to a reader.
      recordLabel: type ? `${type}${name ? ` · ${name}` : ''}` : null,
      lines: detailLines(entry, entry.entityId ? questions.get(entry.entityId) : undefined)
    }
  })
}

export const AUDIT_EXPORT_MAX = 20_000

/** The filtered entries as one CSV table (header on row 1), newest first, at most AUDIT_EXPORT_MAX rows. */
export async function auditCsv(organisationId: number, query: Omit<AuditQuery, 'page' | 'pageSize'>): Promise<string> {
  const entries = await AuditEntry.findAll({ where: await whereOf(organisationId, query), order: [['id', 'DESC']], limit: AUDIT_EXPORT_MAX })
  const rows = await rowsOf(organisationId, entries)
  const lines = [['When (UTC)', 'Who', 'Action', 'Record', 'Details', 'From address'].map(csvField).join(',')]
  for (const r of rows) {
    lines.push([r.at, r.actorEmail ?? String(r.details?.email ?? ''), r.actionLabel, r.recordLabel ?? '', r.lines.join('; '), r.ip ?? ''].map(csvField).join(','))
  }
  return `${lines.join('\r\n')}\r\n`
}

/** The organisation's audit entries, newest first. Failed sign-ins for unknown e-mails have no organisation. */
export async function listAudit(organisationId: number, query: AuditQuery): Promise<Page<AuditRow>> {
  const { rows, count } = await AuditEntry.findAndCountAll({
    where: await whereOf(organisationId, query),
    order: [['id', 'DESC']],
    limit: query.pageSize,
    offset: (query.page - 1) * query.pageSize
  })
  return {
    items: await rowsOf(organisationId, rows),
    total: count,
    page: query.page,
    pageSize: query.pageSize
  }
}
