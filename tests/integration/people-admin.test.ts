import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, DEFAULT_ORGANISATION_SETTINGS, Organisation, User } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { uniqueEmail } from '../support/outbox'
import { type Client, DEMO, demoUser, freshClient } from '../support/server'
import { GOOD_PASSWORD, inviteThroughMail, newPerson } from '../support/team'

// A second, invented organisation with a single admin, so the last-admin rule can be tried without touching
// the demo organisation that other tests sign in to.
let otherAdmin: Client
let otherAdminId: number
let demoAdmin: Client

beforeAll(async () => {
  testDatabase()
  const suffix = Math.random().toString(36).slice(2, 8)
  const organisation = await Organisation.create({ name: 'Tamarind Ridge Seed Cooperative', slug: `tamarind-ridge-${suffix}`, settings: DEFAULT_ORGANISATION_SETTINGS })
  // The demo password's hash, copied, so this admin can sign in without the test hashing anything.
  const { passwordHash } = (await User.findOne({ where: { email: demoUser('admin').email } }))!
  const user = await User.create({
    organisationId: organisation.id,
    email: uniqueEmail('tamarind-admin'),
    name: 'Oluwaseun Brandvold',
    role: 'admin',
    passwordHash,
    lastSignInAt: null
  })
  otherAdminId = user.id
  otherAdmin = freshClient()
  await otherAdmin.signIn(user.email, DEMO.password)
  demoAdmin = freshClient()
  await demoAdmin.signIn(demoUser('admin').email)
})
afterAll(closeTestDatabase)

const patch = (client: Client, id: number | string, body: unknown) => client.request('PATCH', `/api/people/${id}`, body)

describe('the last active administrator', () => {
  it('cannot demote or deactivate themself, but can once a second admin exists', async () => {
    const demote = await patch(otherAdmin, otherAdminId, { role: 'coordinator' })
    expect(demote.status).toBe(409)
    expect(demote.body.message).toBe('You are the last active administrator. Make someone else an administrator first.')
    expect((await patch(otherAdmin, otherAdminId, { active: false })).status).toBe(409)
    expect((await User.findByPk(otherAdminId))!).toMatchObject({ role: 'admin', active: true })

    const second = await newPerson(otherAdmin, 'coordinator')
    expect((await patch(otherAdmin, second.userId, { role: 'admin' })).status).toBe(200)
    expect((await second.client.get('/api/people')).status).toBe(200)
    // Now the first admin may step down; the second is then the last one and is protected in turn.
    expect((await patch(otherAdmin, otherAdminId, { role: 'coordinator' })).status).toBe(200)
    expect((await otherAdmin.get('/api/people')).status).toBe(403)
    const last = await patch(second.client, second.userId, { active: false })
    expect(last.status).toBe(409)
    // Restore the first admin for the tests below.
    expect((await patch(second.client, otherAdminId, { role: 'admin' })).status).toBe(200)
    expect((await otherAdmin.get('/api/people')).status).toBe(200)
  })
})

describe('deactivating, reactivating and changing roles', () => {
  it('refuses a deactivated person at their next request, lets them back after reactivation, and audits both', async () => {
    const person = await newPerson(otherAdmin, 'enumerator')
    expect((await person.client.get('/api/me')).status).toBe(200)
    const off = await patch(otherAdmin, person.userId, { active: false })
    expect(off.status).toBe(200)
    expect(off.body).toMatchObject({ active: false })
    const next = await person.client.get('/api/me')
    expect(next.status).toBe(401)
    expect(next.body.message).toMatch(/no longer active/)
    expect((await freshClient().post('/api/auth/signin', { email: person.email, password: person.password })).status).toBe(403)

    expect((await patch(otherAdmin, person.userId, { active: true })).status).toBe(200)
    await freshClient().signIn(person.email, person.password)
    const actions = (await AuditEntry.findAll({ where: { entityType: 'user', entityId: String(person.userId) }, order: [['id', 'ASC']] })).map(e => e.action)
    expect(actions).toEqual(expect.arrayContaining(['user.invited', 'user.deactivated', 'user.reactivated']))
  })

  it('changes a role at once and records from and to', async () => {
    const person = await newPerson(otherAdmin, 'enumerator')
    expect((await person.client.get('/api/people')).status).toBe(403)
    expect((await patch(otherAdmin, person.userId, { role: 'admin' })).status).toBe(200)
    expect((await person.client.get('/api/people')).status).toBe(200)
    expect((await patch(otherAdmin, person.userId, { role: 'funder' })).status).toBe(200)
    const entry = await AuditEntry.findOne({ where: { action: 'user.role_changed', entityId: String(person.userId) }, order: [['id', 'DESC']] })
    expect(entry!.details).toMatchObject({ from: 'admin', to: 'funder' })
    expect(entry!.actorUserId).toBe(otherAdminId)
  })

  it('answers 404 for a person of another organisation and changes nothing', async () => {
    const answer = await patch(demoAdmin, otherAdminId, { active: false })
    expect(answer.status).toBe(404)
    expect((await User.findByPk(otherAdminId))!.active).toBe(true)
    expect((await patch(demoAdmin, 999_999, { active: false })).status).toBe(404)
  })

  it.each([
    ['an empty object', 1, {}],
    ['an unknown role', 1, { role: 'wizard' }],
    ['a string for active', 1, { active: 'no' }],
    ['no body', 1, undefined],
    ['an id that is not a number', 'abc', { active: true }]
  ])('answers 400 to %s', async (_label, id, body) => {
    const answer = await patch(demoAdmin, id, body)
    expect(answer.status).toBe(400)
    expect(answer.body.message.length).toBeGreaterThan(5)
  })
})

describe('the audit log', () => {
  it('filters by record type and by day', async () => {
    const today = new Date().toISOString().slice(0, 10)
    const users = await otherAdmin.get<{ items: Array<{ entityType: string | null }> }>(`/api/audit?entity=user&from=${today}&to=${today}`)
    expect(users.status).toBe(200)
    expect(users.body.items.length).toBeGreaterThan(0)
    expect(users.body.items.every(e => e.entityType === 'user')).toBe(true)
    const past = await otherAdmin.get<{ items: unknown[] }>('/api/audit?from=2001-01-01&to=2001-01-31')
    expect(past.body.items).toEqual([])
    expect((await otherAdmin.get('/api/audit?from=2026-02-31')).status).toBe(400)
    expect((await otherAdmin.get('/api/audit?to=yesterday')).status).toBe(400)
  })
})

describe('an address another organisation uses', () => {
  const answerShape = (body: Record<string, unknown>) => Object.keys(body).sort().join(',')

  it('is invited with the same answer as a new address, and its owner is told only on opening the link', async () => {
    const taken = await inviteThroughMail(otherAdmin, { email: demoUser('funder').email, role: 'enumerator' })
    const fresh = await otherAdmin.post<Record<string, unknown>>('/api/people/invitations', { email: uniqueEmail('tamarind-new'), role: 'enumerator' })
    const again = await otherAdmin.post<Record<string, unknown>>('/api/people/invitations', { email: demoUser('coordinator').email, role: 'enumerator' })
    expect(fresh.status).toBe(201)
    expect(again.status).toBe(201)
    expect(answerShape(again.body)).toBe(answerShape(fresh.body))
    expect(again.body.reinvited).toBe(false)

    // The owner of the address opens the link: told plainly, nothing is changed.
    const opened = await freshClient().post('/api/auth/link', { token: taken.token, purpose: 'invitation' })
    expect(opened.status).toBe(409)
    expect(opened.body.message).toMatch(/already signs in to Furrowcast for another organisation/)
    const used = await freshClient().post('/api/auth/password', { token: taken.token, purpose: 'invitation', password: GOOD_PASSWORD })
    expect(used.status).toBe(409)
    // Their own account still signs in, to their own organisation.
    const owner = freshClient()
    await owner.signIn(demoUser('funder').email)
    expect((await owner.get<{ role: string }>('/api/me')).body.role).toBe('funder')
  })

  it('holds one password: of two organisations inviting one new address, the first link used wins', async () => {
    const email = uniqueEmail('two-invitations')
    const first = await inviteThroughMail(otherAdmin, { email, role: 'enumerator' })
    const second = await inviteThroughMail(demoAdmin, { email, role: 'coordinator' })
    expect((await freshClient().post('/api/auth/password', { token: second.token, purpose: 'invitation', password: GOOD_PASSWORD })).status).toBe(200)
    const late = await freshClient().post('/api/auth/password', { token: first.token, purpose: 'invitation', password: GOOD_PASSWORD })
    expect(late.status).toBe(409)
    expect(await User.count({ where: { email } })).toBe(2)
    const client = freshClient()
    await client.signIn(email, GOOD_PASSWORD)
    expect((await client.get<{ role: string }>('/api/me')).body.role).toBe('coordinator')
  })
})
