import { Op, type WhereOptions } from 'sequelize'
import type { AuditQuery } from '#shared/utils/schemas/listing'
import type { AuditRow, Page } from '#shared/types/listing'
import { AuditEntry } from '../db/models'

/** The organisation's audit entries, newest first. Failed sign-ins for unknown e-mails have no organisation. */
export async function listAudit(organisationId: number, query: AuditQuery): Promise<Page<AuditRow>> {
  const where: WhereOptions<AuditEntry> = { organisationId }
  if (query.action) Object.assign(where, { action: { [Op.startsWith]: query.action } })
  if (query.actor) Object.assign(where, { actorEmail: { [Op.substring]: query.actor } })
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
