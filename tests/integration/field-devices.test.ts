import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { DeviceRegistration, DeviceRow } from '../../shared/types/field-device'
import { AuditEntry, User } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'
import { freshClient } from '../support/server'

// The server's side of the tablets' encrypted stores: set-up, the spare (escrow) key for a forgotten PIN, the
// "am I revoked?" check, and an admin withdrawing a lost tablet.

let org: TestOrganisation
let other: TestOrganisation
let device: DeviceRegistration
let enumeratorEmail: string
const status = (body: unknown) => freshClient().post<{ state: string }>('/api/field/devices/status', body)

beforeAll(async () => {
  testDatabase()
  org = await makeOrganisation('Tamarind Flats Growers')
  other = await makeOrganisation('Sable Hill Cooperative')
  enumeratorEmail = (await User.findByPk(org.enumeratorId))!.email
})
afterAll(closeTestDatabase)

describe('tablet set-up and the spare key', () => {
  it('gives an enumerator a device id, a spare key and a status token once, and audits the set-up without them', async () => {
    const answer = await org.enumerator.post<DeviceRegistration>('/api/field/devices')
    expect(answer.status).toBe(200)
    device = answer.body
    expect(device.deviceId).toMatch(/^[0-9a-f-]{36}$/)
    expect(Buffer.from(device.escrowKey, 'base64')).toHaveLength(32)
    expect(device.token).toMatch(/^[0-9a-f]{64}$/)
    const entry = await AuditEntry.findOne({ where: { action: 'field_device.set_up', entityId: device.deviceId } })
    expect(entry).not.toBeNull()
    expect(JSON.stringify(entry!.details)).not.toContain(device.escrowKey)
    expect(JSON.stringify(entry!.details)).not.toContain(device.token)
  })

  it('refuses set-up to other roles and to anyone signed out', async () => {
    expect((await org.coordinator.post('/api/field/devices')).status).toBe(403)
    expect((await org.admin.post('/api/field/devices')).status).toBe(403)
    expect((await freshClient().post('/api/field/devices')).status).toBe(401)
  })

  it('releases the spare key to the owner only', async () => {
    const mine = await org.enumerator.post<{ escrowKey: string }>(`/api/field/devices/${device.deviceId}/key`)
    expect(mine.status).toBe(200)
    expect(mine.body.escrowKey).toBe(device.escrowKey)
    expect((await other.enumerator.post(`/api/field/devices/${device.deviceId}/key`)).status).toBe(404)
    expect((await org.coordinator.post(`/api/field/devices/${device.deviceId}/key`)).status).toBe(403)
    expect((await org.enumerator.post('/api/field/devices/not-a-uuid/key')).status).toBe(400)
    expect(await AuditEntry.count({ where: { action: 'field_device.pin_reset', entityId: device.deviceId } })).toBe(1)
  })

  it('answers the status check without a session, only to the right token', async () => {
    expect((await status({ deviceId: device.deviceId, token: device.token })).body).toEqual({ state: 'active' })
    expect((await status({ deviceId: device.deviceId, token: 'f'.repeat(64) })).body).toEqual({ state: 'unknown' })
    expect((await status({ deviceId: device.deviceId, token: 'short' })).status).toBe(400)
    expect((await status({ deviceId: 'x', token: device.token })).status).toBe(400)
  })
})

describe('withdrawing a lost tablet', () => {
  it('lists the organisation\'s tablets to its admins only', async () => {
    const list = await org.admin.get<{ devices: DeviceRow[] }>('/api/devices')
    expect(list.status).toBe(200)
    const row = list.body.devices.find(d => d.id === device.deviceId)
    expect(row).toMatchObject({ personId: org.enumeratorId, personEmail: enumeratorEmail, revokedAt: null })
    expect(row!.label).toBe('Script or tool')
    expect(JSON.stringify(list.body)).not.toContain(device.escrowKey)
    expect((await org.coordinator.get('/api/devices')).status).toBe(403)
    expect((await other.admin.get<{ devices: DeviceRow[] }>('/api/devices')).body.devices.map(d => d.id)).not.toContain(device.deviceId)
  })

  it('refuses other roles and other organisations\' admins, changing nothing', async () => {
    expect((await org.coordinator.post(`/api/devices/${device.deviceId}/revoke`)).status).toBe(403)
    expect((await org.enumerator.post(`/api/devices/${device.deviceId}/revoke`)).status).toBe(403)
    expect((await other.admin.post(`/api/devices/${device.deviceId}/revoke`)).status).toBe(404)
    expect((await status({ deviceId: device.deviceId, token: device.token })).body).toEqual({ state: 'active' })
  })

  it('revokes: audited, the owner signed out, the tablet told at its next contact, its spare key refused', async () => {
    const answer = await org.admin.post<{ revokedAt: string, sessionsEnded: number }>(`/api/devices/${device.deviceId}/revoke`)
    expect(answer.status).toBe(200)
    expect(answer.body.sessionsEnded).toBeGreaterThanOrEqual(1)
    const entry = await AuditEntry.findOne({ where: { action: 'field_device.revoked', entityId: device.deviceId } })
    expect(entry!.details).toMatchObject({ label: 'Script or tool', email: enumeratorEmail })
    expect(JSON.stringify(entry!.details)).not.toContain(device.escrowKey)
    // The owner's session ended with it.
    expect((await org.enumerator.get('/api/sync/visits')).status).toBe(401)
    expect((await status({ deviceId: device.deviceId, token: device.token })).body).toEqual({ state: 'revoked' })
    // Signed in again (the password), the owner still cannot get the spare key of the withdrawn tablet.
    await org.enumerator.signIn(enumeratorEmail)
    const key = await org.enumerator.post<{ message: string }>(`/api/field/devices/${device.deviceId}/key`)
    expect(key.status).toBe(410)
    expect(key.body.message).toMatch(/withdrawn/)
    // A second revoke changes nothing and records nothing more.
    expect((await org.admin.post(`/api/devices/${device.deviceId}/revoke`)).status).toBe(200)
    expect(await AuditEntry.count({ where: { action: 'field_device.revoked', entityId: device.deviceId } })).toBe(1)
    const row = (await org.admin.get<{ devices: DeviceRow[] }>('/api/devices')).body.devices.find(d => d.id === device.deviceId)
    expect(row!.revokedAt).toBe(answer.body.revokedAt)
  })
})
