import { createHash, randomBytes, randomUUID } from 'node:crypto'
import type { H3Event } from 'h3'
import { QueryTypes, type Transaction } from 'sequelize'
import type { DeviceState } from '#shared/utils/schemas/field-device'
import type { DeviceRegistration, DeviceRow } from '#shared/types/field-device'
import { deviceLabel } from '#shared/utils/device-label'
import { User } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'

// Tablets that hold an encrypted field store. The tablet's data key never leaves it; the server only keeps
// (1) an escrow key that can unwrap the tablet's second wrapped copy of the data key, released to the signed-in
// owner while the device is not revoked (the forgotten-PIN path), and (2) a hash of a status token, so that a
// revoked tablet learns it at its next contact and erases its local copy, even though its sessions have ended.

const sha256 = (text: string) => createHash('sha256').update(text).digest('hex')

const select = <T extends object>(sql: string, replacements: unknown[], transaction?: Transaction) =>
  database().query<T>(sql, { replacements, type: QueryTypes.SELECT, transaction })

export async function registerDevice(event: H3Event, user: SignedInUser): Promise<DeviceRegistration> {
  const registration: DeviceRegistration = { deviceId: randomUUID(), escrowKey: randomBytes(32).toString('base64'), token: randomBytes(32).toString('hex') }
  const label = deviceLabel(getRequestHeader(event, 'user-agent')).slice(0, 80)
  await database().transaction(async (transaction) => {
    await database().query(`INSERT INTO field_devices (id, organisation_id, user_id, label, escrow_key, token_hash, created_at, last_seen_at)
      VALUES (?, ?, ?, ?, ?, ?, NOW(3), NOW(3))`, { replacements: [registration.deviceId, user.organisationId, user.id, label, registration.escrowKey, sha256(registration.token)], transaction })
    await audit(event, user, { action: 'field_device.set_up', entityType: 'field_device', entityId: registration.deviceId, details: { label } }, transaction)
  })
  return registration
}

/** The escrow key of the caller's own tablet, for a new PIN; refused (410) once the tablet is revoked. */
export async function releaseEscrowKey(event: H3Event, user: SignedInUser, deviceId: string): Promise<{ escrowKey: string }> {
  const [row] = await select<{ escrowKey: string, revokedAt: Date | null }>('SELECT escrow_key AS escrowKey, revoked_at AS revokedAt FROM field_devices WHERE id = ? AND user_id = ? AND organisation_id = ?',
    [deviceId, user.id, user.organisationId])
  if (!row) throw createError({ statusCode: 404, message: 'This tablet is not set up for you. Sign in on it and choose a PIN again.' })
  if (row.revokedAt) throw createError({ statusCode: 410, message: 'This tablet was withdrawn by an admin; its data key is refused.' })
  await audit(event, user, { action: 'field_device.pin_reset', entityType: 'field_device', entityId: deviceId })
  return { escrowKey: row.escrowKey }
}

/** Answers a tablet's "am I revoked?"; a token that does not match is treated like an unknown tablet. */
export async function deviceState(deviceId: string, token: string): Promise<DeviceState> {
  const [row] = await select<{ revokedAt: Date | null }>('SELECT revoked_at AS revokedAt FROM field_devices WHERE id = ? AND token_hash = ?', [deviceId, sha256(token)])
  if (!row) return 'unknown'
  if (row.revokedAt) return 'revoked'
  await database().query('UPDATE field_devices SET last_seen_at = NOW(3) WHERE id = ? AND (last_seen_at IS NULL OR last_seen_at < NOW(3) - INTERVAL 1 MINUTE)', { replacements: [deviceId] })
  return 'active'
}

export async function devicesOf(organisationId: number): Promise<DeviceRow[]> {
  const rows = await select<{ id: string, personId: number, personName: string, personEmail: string, label: string, createdAt: Date, lastSeenAt: Date | null, revokedAt: Date | null }>(
    `SELECT d.id, d.user_id AS personId, u.name AS personName, u.email AS personEmail, d.label, d.created_at AS createdAt,
      d.last_seen_at AS lastSeenAt, d.revoked_at AS revokedAt
      FROM field_devices d JOIN users u ON u.id = d.user_id WHERE d.organisation_id = ? ORDER BY d.revoked_at IS NOT NULL, u.name, d.created_at DESC LIMIT 2000`, [organisationId])
  const iso = (d: Date | null) => d ? new Date(d).toISOString() : null
  return rows.map(r => ({ ...r, personId: Number(r.personId), createdAt: iso(r.createdAt)!, lastSeenAt: iso(r.lastSeenAt), revokedAt: iso(r.revokedAt) }))
}

/**
 * An admin withdraws a lost tablet: its escrow key is refused from now on, its next status check tells it to erase
 * its local copy, and every session of its owner ends (the server cannot tell which session cookie is on the lost
 * tablet). Audited with the tablet's label and owner, in one transaction.
 */
export async function revokeDevice(event: H3Event, admin: SignedInUser, deviceId: string): Promise<{ revokedAt: string, sessionsEnded: number }> {
  return database().transaction(async (transaction) => {
    const [row] = await select<{ userId: number, label: string, revokedAt: Date | null }>('SELECT user_id AS userId, label, revoked_at AS revokedAt FROM field_devices WHERE id = ? AND organisation_id = ? FOR UPDATE',
      [deviceId, admin.organisationId], transaction)
    if (!row) throw createError({ statusCode: 404, message: 'There is no such tablet in your organisation.' })
    if (row.revokedAt) return { revokedAt: new Date(row.revokedAt).toISOString(), sessionsEnded: 0 }
    const now = new Date()
    await database().query('UPDATE field_devices SET revoked_at = ?, revoked_by = ? WHERE id = ?', { replacements: [now, admin.id, deviceId], transaction })
    const sessionsEnded = await revokeSessionsOf(Number(row.userId), 'ended_by_admin', { transaction })
    const owner = await User.findByPk(row.userId, { attributes: ['email'], transaction })
    await audit(event, admin, { action: 'field_device.revoked', entityType: 'field_device', entityId: deviceId, details: { label: row.label, email: owner?.email ?? null, sessionsEnded } }, transaction)
    return { revokedAt: now.toISOString(), sessionsEnded }
  })
}
