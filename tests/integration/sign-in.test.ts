import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, SignInAttempt, User } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { DEMO, demoUser, freshClient } from '../support/server'

beforeAll(() => {
  testDatabase()
})
afterAll(closeTestDatabase)

describe('sign-in', () => {
  it.each(DEMO.users.map(u => [u.role, u.email]))('signs in the demo %s and reports the role from the database', async (role, email) => {
    const client = freshClient()
    const answer = await client.post('/api/auth/signin', { email, password: DEMO.password })
    expect(answer.status).toBe(200)
    expect(answer.body).toMatchObject({ email, role, organisationName: DEMO.organisation.name })
    const me = await client.get('/api/me')
    expect(me.status).toBe(200)
    expect(me.body.role).toBe(role)
  })

  it('accepts the e-mail in any case and with spaces around it', async () => {
    const client = freshClient()
    const answer = await client.post('/api/auth/signin', { email: `  ${demoUser('funder').email.toUpperCase()} `, password: DEMO.password })
    expect(answer.status).toBe(200)
  })

  it('refuses a wrong password with a readable message and records the failure', async () => {
    const client = freshClient()
    const email = demoUser('coordinator').email
    const before = await AuditEntry.count({ where: { action: 'signin.failed' } })
    const answer = await client.post('/api/auth/signin', { email, password: 'not the password' })
    expect(answer.status).toBe(401)
    expect(answer.body.message).toBe('That e-mail and password do not match an account.')
    expect(JSON.stringify(answer.body)).not.toMatch(/stack|at .*\.mjs/)
    expect(await AuditEntry.count({ where: { action: 'signin.failed' } })).toBe(before + 1)
    expect((await client.get('/api/me')).status).toBe(401)
  })

  it.each([
    ['no body', undefined],
    ['an empty object', {}],
    ['a malformed e-mail', { email: 'not-an-email', password: 'x' }],
    ['an empty password', { email: 'a@b.example', password: '' }],
    ['an over-long password', { email: 'a@b.example', password: 'x'.repeat(500) }],
    ['an array', [1, 2, 3]],
    ['numbers instead of strings', { email: 42, password: 42 }]
  ])('answers 400 with a message for %s', async (_label, body) => {
    const answer = await freshClient().post('/api/auth/signin', body)
    expect(answer.status).toBe(400)
    expect(typeof answer.body.message).toBe('string')
    expect(answer.body.message.length).toBeGreaterThan(3)
  })

  it('answers 400, not 500, to a body that is not JSON', async () => {
    const answer = await freshClient().request('POST', '/api/auth/signin', undefined, '{"email": "a@b.example", ')
    expect(answer.status).toBe(400)
  })

  it('records sign-in and sign-out in the audit log with the caller address', async () => {
    const client = freshClient()
    const user = demoUser('enumerator')
    await client.signIn(user.email)
    const signedIn = await AuditEntry.findOne({ where: { action: 'signin', actorEmail: user.email }, order: [['id', 'DESC']] })
    expect(signedIn?.ip).toMatch(/^10\./)
    const out = await client.post('/api/auth/signout')
    expect(out.status).toBe(200)
    const signedOut = await AuditEntry.findOne({ where: { action: 'signout', actorEmail: user.email }, order: [['id', 'DESC']] })
    expect(signedOut).not.toBeNull()
    expect((await client.get('/api/me')).status).toBe(401)
  })
})

describe('sign-in limits', () => {
  it('blocks an e-mail after 10 failures in the window, even with the right password, from any address', async () => {
    const email = demoUser('admin').email
    for (let i = 0; i < 10; i++) {
      const answer = await freshClient().post('/api/auth/signin', { email, password: `wrong-${i}` })
      expect(answer.status).toBe(401)
    }
    const blocked = await freshClient().post('/api/auth/signin', { email, password: DEMO.password })
    expect(blocked.status).toBe(429)
    expect(blocked.body.message).toMatch(/Too many failed sign-ins\. Try again in \d+ minutes?\./)
    expect(Number(blocked.headers.get('retry-after'))).toBeGreaterThan(0)
    // Clear the window so later tests can use the admin again.
    await SignInAttempt.destroy({ where: { email } })
    expect((await freshClient().post('/api/auth/signin', { email, password: DEMO.password })).status).toBe(200)
  })

  it('blocks an address after 30 failures across many e-mails', async () => {
    const client = freshClient()
    for (let i = 0; i < 30; i++) {
      expect((await client.post('/api/auth/signin', { email: `nobody-${i}@nowhere.example`, password: 'x' })).status).toBe(401)
    }
    expect((await client.post('/api/auth/signin', { email: demoUser('funder').email, password: DEMO.password })).status).toBe(429)
    // Another address is not affected.
    expect((await freshClient().post('/api/auth/signin', { email: demoUser('funder').email, password: DEMO.password })).status).toBe(200)
  })
})

describe('deactivated accounts', () => {
  it('cannot sign in, and a signed-in session loses access on its next request', async () => {
    const user = demoUser('funder')
    const client = freshClient()
    await client.signIn(user.email)
    expect((await client.get('/api/me')).status).toBe(200)
    await User.update({ active: false }, { where: { email: user.email } })
    try {
      const next = await client.get('/api/me')
      expect(next.status).toBe(401)
      expect(next.body.message).toMatch(/no longer active/)
      const again = await freshClient().post('/api/auth/signin', { email: user.email, password: DEMO.password })
      expect(again.status).toBe(403)
      expect(again.body.message).toMatch(/deactivated/)
    }
    finally {
      await User.update({ active: true }, { where: { email: user.email } })
    }
  })
})
