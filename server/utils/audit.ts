import type { H3Event } from 'h3'
import type { Transaction } from 'sequelize'
import { AuditEntry } from '../db/models'

export interface AuditActor {
  id: number
  email: string
  organisationId: number
}

export interface AuditRecord {
  action: string
  entityType?: string
  entityId?: string | number
  details?: Record<string, unknown>
  /** For events without a signed-in actor that still belong to an organisation (a failed sign-in). */
  organisationId?: number
}

/** Appends one entry to the audit log; pass the transaction of the change it records. */
export async function audit(event: H3Event, actor: AuditActor | null, record: AuditRecord, transaction?: Transaction) {
  await AuditEntry.create({
    organisationId: record.organisationId ?? actor?.organisationId ?? null,
    actorUserId: actor?.id ?? null,
    actorEmail: actor?.email ?? null,
    action: record.action,
    entityType: record.entityType ?? null,
    entityId: record.entityId === undefined ? null : String(record.entityId),
    ip: clientIp(event),
    details: record.details ?? null
  }, { transaction })
}
