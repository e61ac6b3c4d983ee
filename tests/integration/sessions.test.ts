import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Round, SessionRecord } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type Client, baseUrl, demoUser, freshClient } from '../support/server'
import { newPerson } from '../support/team'

// Sessions the server can end: each attack replays a copy of a cookie taken while it was good.
let admin: Client

beforeAll(async () => {
  testDatabase()
  admin = freshClient()
  await admin.signIn(demoUser('admin').email)
})
afterAll(closeTestDatabase)

/** Replays a copied Cookie header from elsewhere, as a thief would. */
async function replay(cookie: string, method: string, path: string, body?: unknown) {
  const response = await fetch(`${baseUrl()}${path}`, {
    method,
    headers: { cookie, 'accept': 'application/json', 'x-forwarded-for': '10.250.1.1', ...(body ? { 'content-type': 'application/json' } : {}) },
    body: body ? JSON.stringify(body) : undefined
  })
  return { status: response.status, body: await response.json() as { message?: string } }
}

/** A copy of the cookie is refused for reading and for changing anything. */
async function expectRefused(cookie: string, message?: RegExp) {
  const me = await replay(cookie, 'GET', '/api/me')
  expect(me.status).toBe(401)
  if (message) expect(me.body.message).toMatch(message)
  const name = `Forged round ${Math.random().toString(36).slice(2)}`
  const round = await replay(cookie, 'POST', '/api/rounds', { name, technology: 'Drought-tolerant maize', season: 'Long rains' })
  expect(round.status).toBe(401)
  expect(await Round.count({ where: { name } })).toBe(0)
}

const sessionsOf = (userId: number) => SessionRecord.findAll({ where: { userId }, order: [['id', 'ASC']] })

describe('a copied cookie stops working', () => {
  it('after sign-out, which revokes the session row', async () => {
    const person = await newPerson(admin, 'coordinator')
    const copy = person.client.cookieHeader()
    expect((await replay(copy, 'GET', '/api/me')).status).toBe(200)
    expect((await person.client.post('/api/auth/signout')).status).toBe(200)
    await expectRefused(copy)
    const rows = await sessionsOf(person.userId)
    expect(rows.at(-1)!.revokedReason).toBe('signed_out')
  })

  it('after DELETE /api/_auth/session (the session library\'s own sign-out)', async () => {
    const person = await newPerson(admin, 'coordinator')
    const copy = person.client.cookieHeader()
    expect((await person.client.request('DELETE', '/api/_auth/session')).status).toBe(200)
    await expectRefused(copy)
  })

  it('after "sign out everywhere", on every device', async () => {
    const person = await newPerson(admin, 'coordinator')
    const tablet = freshClient()
    await tablet.signIn(person.email, person.password)
    const copies = [person.client.cookieHeader(), tablet.cookieHeader()]
    const ended = await person.client.request<{ ended: number }>('DELETE', '/api/me/sessions')
    expect(ended.status).toBe(200)
    expect(ended.body.ended).toBe(2)
    for (const copy of copies) await expectRefused(copy)
  })

  it('after deactivation, and still after reactivation', async () => {
    const person = await newPerson(admin, 'coordinator')
    const copy = person.client.cookieHeader()
    expect((await admin.request('PATCH', `/api/people/${person.userId}`, { active: false })).status).toBe(200)
    await expectRefused(copy, /no longer active/)
    expect((await admin.request('PATCH', `/api/people/${person.userId}`, { active: true })).status).toBe(200)
    await expectRefused(copy)
    expect((await sessionsOf(person.userId)).every(row => row.revokedReason === 'deactivated')).toBe(true)
    // A fresh sign-in works again.
    await freshClient().signIn(person.email, person.password)
  })

  it('after a password change, on the other devices only', async () => {
    const person = await newPerson(admin, 'funder')
    const laptop = freshClient()
    await laptop.signIn(person.email, person.password)
    const copy = laptop.cookieHeader()
    const changed = await person.client.post('/api/me/password', { currentPassword: person.password, newPassword: 'kettle-of-sorghum-at-dawn' })
    expect(changed.status).toBe(200)
    await expectRefused(copy, /password was changed/)
    expect((await person.client.get('/api/me')).status).toBe(200)
  })

  it('when an admin ends all of a person\'s sessions', async () => {
    const person = await newPerson(admin, 'enumerator')
    const copy = person.client.cookieHeader()
    const people = await admin.get<{ items: Array<{ id: number, openSessions: number }> }>(`/api/people?search=${encodeURIComponent(person.email)}`)
    expect(people.body.items[0]!.openSessions).toBe(1)
    const ended = await admin.request<{ ended: number }>('DELETE', `/api/people/${person.userId}/sessions`)
    expect(ended.status).toBe(200)
    expect(ended.body.ended).toBe(1)
    await expectRefused(copy, /administrator ended/)
    // Only admins may, and only for their own organisation's people.
    const coordinator = await newPerson(admin, 'coordinator')
    expect((await coordinator.client.request('DELETE', `/api/people/${coordinator.userId}/sessions`)).status).toBe(403)
    expect((await admin.request('DELETE', '/api/people/99999999/sessions')).status).toBe(404)
  })
})

describe('idle timeout and absolute lifetime', () => {
  it('ends an office session idle for longer than 8 hours, but not a tablet\'s', async () => {
    const office = await newPerson(admin, 'coordinator')
    const tablet = await newPerson(admin, 'enumerator')
    const nineHoursAgo = new Date(Date.now() - 9 * 3600_000)
    await SessionRecord.update({ lastSeenAt: nineHoursAgo }, { where: { userId: [office.userId, tablet.userId] } })
    await expectRefused(office.client.cookieHeader(), /expired/)
    expect((await tablet.client.get('/api/field/setup')).status).toBe(200)
  })

  it('ends any session past its absolute lifetime, however active', async () => {
    const office = await newPerson(admin, 'coordinator')
    const [row] = await sessionsOf(office.userId)
    await SessionRecord.update({ createdAt: new Date(Date.now() - 8 * 86_400_000) }, { where: { id: row!.id } })
    await expectRefused(office.client.cookieHeader(), /expired/)
    const tablet = await newPerson(admin, 'enumerator')
    const [tabletRow] = await sessionsOf(tablet.userId)
    expect(tabletRow!.expiresAt.getTime() - tabletRow!.createdAt.getTime()).toBe(60 * 86_400_000)
    await SessionRecord.update({ expiresAt: new Date(Date.now() - 1000) }, { where: { id: tabletRow!.id } })
    await expectRefused(tablet.client.cookieHeader(), /expired/)
  })

  it('writes last seen at most once a minute', async () => {
    const person = await newPerson(admin, 'coordinator')
    const [before] = await sessionsOf(person.userId)
    for (let i = 0; i < 3; i++) expect((await person.client.get('/api/me')).status).toBe(200)
    expect((await SessionRecord.findByPk(before!.id))!.lastSeenAt.getTime()).toBe(before!.lastSeenAt.getTime())
    const twoMinutesAgo = new Date(Date.now() - 120_000)
    await SessionRecord.update({ lastSeenAt: twoMinutesAgo }, { where: { id: before!.id } })
    await person.client.get('/api/me')
    expect((await SessionRecord.findByPk(before!.id))!.lastSeenAt.getTime()).toBeGreaterThan(Date.now() - 30_000)
  })
})

describe('the account page\'s list of sessions', () => {
  it('lists open sessions with device and last seen, and ends one of them', async () => {
    const person = await newPerson(admin, 'coordinator')
    const other = freshClient()
    await other.signIn(person.email, person.password)
    const list = await person.client.get<{ items: Array<{ id: number, device: string, lastSeenAt: string, current: boolean, ip: string }> }>('/api/me/sessions')
    expect(list.status).toBe(200)
    expect(list.body.items).toHaveLength(2)
    expect(list.body.items.filter(s => s.current)).toHaveLength(1)
    expect(list.body.items[0]!.device).toBe('Script or tool')
    const others = list.body.items.find(s => !s.current)!
    expect((await person.client.request('DELETE', `/api/me/sessions/${others.id}`)).status).toBe(200)
    expect((await other.get('/api/me')).status).toBe(401)
    expect((await person.client.get('/api/me')).status).toBe(200)
    // Someone else's session id is not found, and nothing of theirs ends.
    const stranger = await newPerson(admin, 'coordinator')
    const [strangerRow] = await sessionsOf(stranger.userId)
    expect((await person.client.request('DELETE', `/api/me/sessions/${strangerRow!.id}`)).status).toBe(404)
    expect((await stranger.client.get('/api/me')).status).toBe(200)
  })

  it('keeps only a hash of the cookie\'s token', async () => {
    const person = await newPerson(admin, 'coordinator')
    const [row] = await sessionsOf(person.userId)
    expect(row!.tokenHash).toMatch(/^[0-9a-f]{64}$/)
    expect(person.client.cookieHeader()).not.toContain(row!.tokenHash)
    expect(row!.ip).toMatch(/^10\./)
  })
})

describe('the current-password check on a password change', () => {
  it('is limited like sign-in: after ten wrong guesses even the right password is refused for a while', async () => {
    const person = await newPerson(admin, 'coordinator')
    for (let i = 0; i < 10; i++) {
      const wrong = await person.client.post('/api/me/password', { currentPassword: `guess-number-${i}-abc`, newPassword: 'kettle-of-sorghum-at-dawn' })
      expect(wrong.status).toBe(400)
    }
    const blocked = await person.client.post('/api/me/password', { currentPassword: person.password, newPassword: 'kettle-of-sorghum-at-dawn' })
    expect(blocked.status).toBe(429)
    expect(blocked.headers.get('retry-after')).toBeTruthy()
    // Still the old password: nothing changed.
    await freshClient().signIn(person.email, person.password)
  })
})
