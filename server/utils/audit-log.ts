import { Op, type WhereOptions } from 'sequelize'
import type { AuditQuery } from '#shared/utils/schemas/listing'
import type { AuditRow, Page } from '#shared/types/listing'
import { AuditEntry } from '../db/models'

/** The organisation's audit entries, newest first. Failed sign-ins for unknown e-mails have no organisation. */
export async function listAudit(organisationId: number, query: AuditQuery): Promise<Page<AuditRow>> {
  const where: WhereOptions<AuditEntry> = { organisationId }
  if (query.action) Object.assign(where, { action: { [Op.startsWith]: query.action } })
  if (query.actor) Object.assign(where, { actorEmail: { [Op.substring]: query.actor } })
  if (query.entity) Object.assign(where, { entityType: query.entity })
  // Days are whole UTC days: from 00:00 of `from` up to, not including, 00:00 after `to`.
  const range: Record<symbol, Date> = {}
  if (query.from) range[Op.gte] = new Date(`${query.from}T00:00:00Z`)
  if (query.to) range[Op.lt] = new Date(new Date(`${query.to}T00:00:00Z`).getTime() + 86_400_000)
  if (query.from || query.to) Object.assign(where, { createdAt: range })
  const { rows, count } = await AuditEntry.findAndCountAll({
    where,
    order: [['id', 'DESC']],
    limit: query.pageSize,
    offset: (query.page - 1) * query.pageSize
  })
  return {
    items: rows.map(entry => ({
      id: Number(entry.id),
      at: entry.createdAt.toISOString(),
      actorEmail: entry.actorEmail,
      action: entry.action,
      entityType: entry.entityType,
      entityId: entry.entityId,
      ip: entry.ip,
      details: entry.details
    })),
    total: count,
    page: query.page,
    pageSize: query.pageSize
  }
}
