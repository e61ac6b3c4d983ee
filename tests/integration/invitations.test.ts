import { createHash } from 'node:crypto'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, MailMessage, User, UserToken } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { linkToken, uniqueEmail, waitForMail } from '../support/outbox'
import { type Client, demoUser, freshClient } from '../support/server'
import { GOOD_PASSWORD, inviteThroughMail } from '../support/team'

let admin: Client

beforeAll(async () => {
  testDatabase()
  admin = freshClient()
  await admin.signIn(demoUser('admin').email)
})
afterAll(closeTestDatabase)

const check = (token: string, purpose = 'invitation') => freshClient().post('/api/auth/link', { token, purpose })
const accept = (token: string, password = GOOD_PASSWORD, client = freshClient()) =>
  client.post('/api/auth/password', { token, purpose: 'invitation', password })

describe('inviting by e-mail', () => {
  it('creates the person, sends a message with a single-use link, and lets them choose a password and sign in', async () => {
    const email = uniqueEmail('coordinator')
    const answer = await admin.post<{ userId: number, reinvited: boolean, expiresAt: string }>('/api/people/invitations', { email, role: 'coordinator', name: 'Ruth Achterberg' })
    expect(answer.status).toBe(201)
    expect(answer.body.reinvited).toBe(false)
    const hours = (new Date(answer.body.expiresAt).getTime() - Date.now()) / 3_600_000
    expect(hours).toBeGreaterThan(71.9)
    expect(hours).toBeLessThanOrEqual(72)

    const mail = await waitForMail(email)
    expect(mail.subject).toContain('Kestrel Valley Growers Trust')
    expect(mail.text).toContain('coordinator')
    const { token, url } = linkToken(mail, 'welcome')
    expect(url.startsWith(process.env.FURROWCAST_TEST_URL!)).toBe(true)

    // Only the SHA-256 of the secret part is stored; the sent message's body is blanked.
    const [id, secret] = token.split('.')
    const row = await UserToken.findByPk(Number(id))
    expect(row!.tokenHash).toBe(createHash('sha256').update(secret!).digest('hex'))
    expect(row!.tokenHash).not.toContain(secret)
    const message = await MailMessage.findOne({ where: { userId: answer.body.userId, kind: 'invitation' }, order: [['id', 'DESC']] })
    expect(message!.status).toBe('sent')
    expect(message!.textBody).not.toContain(secret)

    const checked = await check(token)
    expect(checked.status).toBe(200)
    expect(checked.body).toMatchObject({ email, name: 'Ruth Achterberg', purpose: 'invitation' })

    expect((await accept(token)).status).toBe(200)
    const client = freshClient()
    const signedIn = await client.signIn(email, GOOD_PASSWORD)
    expect(signedIn.body).toMatchObject({ email, role: 'coordinator' })
    expect(await AuditEntry.count({ where: { action: 'invitation.accepted', entityId: String(answer.body.userId) } })).toBe(1)

    const reused = await accept(token, 'another-long-passphrase')
    expect(reused.status).toBe(410)
    expect(reused.body.message).toBe('This invitation link has already been used. Sign in with the password you chose.')
    expect((await check(token)).status).toBe(410)
    // The reuse did not change the password.
    expect((await freshClient().post('/api/auth/signin', { email, password: 'another-long-passphrase' })).status).toBe(401)
  })

  it('invalidates the earlier link when the same address is invited again', async () => {
    const first = await inviteThroughMail(admin, { role: 'enumerator' })
    const second = await inviteThroughMail(admin, { email: first.email, role: 'funder' })
    expect(second.token).not.toBe(first.token)
    const old = await check(first.token)
    expect(old.status).toBe(410)
    expect(old.body.message).toBe('A newer invitation was sent to you. Use the link in the latest message.')
    expect((await accept(first.token)).status).toBe(410)
    const fresh = await check(second.token)
    expect(fresh.status).toBe(200)
    // The second invitation also changed the role.
    expect((await User.findByPk(first.userId))!.role).toBe('funder')
  })

  it('refuses an expired link with a clear message', async () => {
    const invited = await inviteThroughMail(admin, { role: 'enumerator' })
    await UserToken.update({ expiresAt: new Date(Date.now() - 60_000) }, { where: { id: Number(invited.token.split('.')[0]) } })
    const answer = await accept(invited.token)
    expect(answer.status).toBe(410)
    expect(answer.body.message).toBe('This invitation link has expired. Ask your administrator to invite you again.')
    expect((await User.findByPk(invited.userId))!.passwordHash).toBeNull()
  })

  it('refuses a tampered or made-up link as not valid, and a reset link used as an invitation', async () => {
    const invited = await inviteThroughMail(admin, { role: 'enumerator' })
    const [id, secret] = invited.token.split('.') as [string, string]
    const flipped = `${id}.${secret.slice(0, -1)}${secret.endsWith('A') ? 'B' : 'A'}`
    for (const token of [flipped, `${Number(id) + 1000}.${secret}`, 'not-a-token', `${id}.${secret}x`]) {
      const answer = await check(token)
      expect(answer.status, token).toBe(400)
      expect(answer.body.message).toMatch(/^This invitation link is not valid\./)
    }
    expect((await check(invited.token, 'reset')).status).toBe(400)
    expect((await check(invited.token)).status).toBe(200)
  })

  it('refuses short and common passwords with readable messages, and uses up nothing', async () => {
    const invited = await inviteThroughMail(admin, { role: 'enumerator' })
    const short = await accept(invited.token, 'short')
    expect(short.status).toBe(400)
    expect(short.body.message).toMatch(/at least 10 characters/)
    for (const common of ['1234567890', 'qwertyuiop', 'Password2026!', 'sunshine12345']) {
      const answer = await accept(invited.token, common)
      expect(answer.status, common).toBe(400)
      expect(answer.body.message).toMatch(/most common/)
    }
    expect((await check(invited.token)).status).toBe(200)
    expect((await accept(invited.token)).status).toBe(200)
  })

  it('refuses the link of a person deactivated after the invitation', async () => {
    const invited = await inviteThroughMail(admin, { role: 'enumerator' })
    expect((await admin.request('PATCH', `/api/people/${invited.userId}`, { active: false })).status).toBe(200)
    const answer = await accept(invited.token)
    expect(answer.status).toBe(403)
    expect(answer.body.message).toMatch(/deactivated/)
  })

  it('refuses to invite an address that already has an account', async () => {
    const answer = await admin.post('/api/people/invitations', { email: demoUser('funder').email, role: 'funder' })
    expect(answer.status).toBe(409)
    expect(answer.body.message).toBe('This e-mail address already has a Furrowcast account.')
  })

  it.each([
    ['no body', undefined],
    ['an empty object', {}],
    ['a malformed e-mail', { email: 'nobody', role: 'enumerator' }],
    ['an unknown role', { email: 'x@team-test.example', role: 'wizard' }],
    ['a name that is too long', { email: 'x@team-test.example', role: 'funder', name: 'n'.repeat(200) }],
    ['an array', ['x@team-test.example']]
  ])('answers 400 with a message to %s, and writes nothing', async (_label, body) => {
    const before = { users: await User.count(), mail: await MailMessage.count(), tokens: await UserToken.count() }
    const answer = await admin.post('/api/people/invitations', body)
    expect(answer.status).toBe(400)
    expect(answer.body.message.length).toBeGreaterThan(5)
    expect({ users: await User.count(), mail: await MailMessage.count(), tokens: await UserToken.count() }).toEqual(before)
  })

  it('shows the invitation and its mail state in the people list', async () => {
    const invited = await inviteThroughMail(admin, { role: 'funder', name: 'Zeynep Marchetti-Oduya' })
    const list = await admin.get<{ items: Array<{ email: string, hasPassword: boolean, invitation: { expired: boolean } | null, mail: { status: string, kind: string } | null }> }>(
      `/api/people?search=${encodeURIComponent(invited.email)}`
    )
    expect(list.body.items).toHaveLength(1)
    expect(list.body.items[0]).toMatchObject({ hasPassword: false, invitation: { expired: false }, mail: { status: 'sent', kind: 'invitation' } })
  })
})

describe('link routes are rate-limited per address', () => {
  it('blocks an address after 20 refused links, without touching other addresses', async () => {
    const client = freshClient()
    for (let i = 0; i < 20; i++) {
      expect((await client.post('/api/auth/link', { token: `${i + 1}.${'A'.repeat(43)}`, purpose: 'reset' })).status).toBe(400)
    }
    const blocked = await client.post('/api/auth/link', { token: `1.${'A'.repeat(43)}`, purpose: 'reset' })
    expect(blocked.status).toBe(429)
    expect(blocked.body.message).toMatch(/Too many links were refused from this address\. Try again in \d+ minutes\./)
    expect((await client.post('/api/auth/password', { token: `1.${'A'.repeat(43)}`, purpose: 'reset', password: GOOD_PASSWORD })).status).toBe(429)
    expect((await freshClient().post('/api/auth/link', { token: `1.${'A'.repeat(43)}`, purpose: 'reset' })).status).toBe(400)
  })
})
