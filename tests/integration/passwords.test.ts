import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { MailMessage, User } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { linkToken, mailsTo, uniqueEmail, waitForMail } from '../support/outbox'
import { type Client, demoUser, freshClient } from '../support/server'
import { GOOD_PASSWORD, newPerson } from '../support/team'

let admin: Client

beforeAll(async () => {
  testDatabase()
  admin = freshClient()
  await admin.signIn(demoUser('admin').email)
})
afterAll(closeTestDatabase)

describe('forgot password', () => {
  it('answers the same whether or not the address has an account, and mails only a real account', async () => {
    const person = await newPerson(admin, 'enumerator')
    const unknown = uniqueEmail('nobody')
    const known = await freshClient().post('/api/auth/forgot', { email: person.email })
    const missing = await freshClient().post('/api/auth/forgot', { email: unknown })
    expect(known.status).toBe(200)
    expect(missing.status).toBe(known.status)
    expect(missing.body).toEqual(known.body)
    const mail = await waitForMail(person.email, 2)
    expect(mail.subject).toBe('Reset your Furrowcast password')
    expect(linkToken(mail, 'reset').token).toMatch(/^\d+\.[\w-]{43}$/)
    expect(await MailMessage.count({ where: { toAddress: unknown } })).toBe(0)
    expect(await mailsTo(unknown)).toHaveLength(0)
  })

  it('sends at most three reset messages per address in the window, still answering the same', async () => {
    const person = await newPerson(admin, 'funder')
    const answers = []
    for (let i = 0; i < 5; i++) answers.push(await freshClient().post('/api/auth/forgot', { email: person.email }))
    expect(new Set(answers.map(a => `${a.status} ${JSON.stringify(a.body)}`)).size).toBe(1)
    expect(await MailMessage.count({ where: { userId: person.userId, kind: 'reset' } })).toBe(3)
  })

  it('limits one address to ten requests in the window', async () => {
    const client = freshClient()
    for (let i = 0; i < 10; i++) expect((await client.post('/api/auth/forgot', { email: uniqueEmail('spray') })).status).toBe(200)
    const blocked = await client.post('/api/auth/forgot', { email: uniqueEmail('spray') })
    expect(blocked.status).toBe(429)
    expect(blocked.headers.get('retry-after')).toBeTruthy()
  })

  it.each([[undefined], [{}], [{ email: 'not an address' }], [{ email: 7 }]])('answers 400 to %j', async (body) => {
    const answer = await freshClient().post('/api/auth/forgot', body)
    expect(answer.status).toBe(400)
    expect(typeof answer.body.message).toBe('string')
    expect(answer.body.message.length).toBeGreaterThan(5)
  })
})

describe('resetting by link', () => {
  it('sets the new password, ends every existing session, and uses up the link', async () => {
    const person = await newPerson(admin, 'coordinator')
    const otherDevice = freshClient()
    await otherDevice.signIn(person.email, person.password)
    expect((await person.client.get('/api/me')).status).toBe(200)

    await freshClient().post('/api/auth/forgot', { email: person.email })
    const { token } = linkToken(await waitForMail(person.email, 2), 'reset')
    expect((await freshClient().post('/api/auth/link', { token, purpose: 'reset' })).body).toMatchObject({ email: person.email })
    const reset = await freshClient().post('/api/auth/password', { token, purpose: 'reset', password: 'harvest-moon-over-ombara' })
    expect(reset.status).toBe(200)

    for (const client of [person.client, otherDevice]) {
      const next = await client.get('/api/me')
      expect(next.status).toBe(401)
      expect(next.body.message).toBe('Your password was changed, so this session has ended. Sign in again.')
    }
    expect((await freshClient().post('/api/auth/signin', { email: person.email, password: person.password })).status).toBe(401)
    await freshClient().signIn(person.email, 'harvest-moon-over-ombara')
    const again = await freshClient().post('/api/auth/password', { token, purpose: 'reset', password: 'yet-another-passphrase' })
    expect(again.status).toBe(410)
    expect(again.body.message).toMatch(/already been used/)
  })

  it('refuses an invitation link on the reset route and a reset link for a deactivated person', async () => {
    const person = await newPerson(admin, 'enumerator')
    await freshClient().post('/api/auth/forgot', { email: person.email })
    const { token } = linkToken(await waitForMail(person.email, 2), 'reset')
    expect((await freshClient().post('/api/auth/link', { token, purpose: 'invitation' })).status).toBe(400)
    await User.update({ active: false }, { where: { id: person.userId } })
    const answer = await freshClient().post('/api/auth/password', { token, purpose: 'reset', password: GOOD_PASSWORD })
    expect(answer.status).toBe(403)
  })
})

describe('changing one\'s own password', () => {
  it('keeps this session, ends the others, and refuses a wrong current password or a common new one', async () => {
    const person = await newPerson(admin, 'funder')
    const other = freshClient()
    await other.signIn(person.email, person.password)

    const wrong = await person.client.post('/api/me/password', { currentPassword: 'not it at all', newPassword: 'green-shoots-in-june' })
    expect(wrong.status).toBe(400)
    expect(wrong.body.message).toBe('That is not your current password.')
    const common = await person.client.post('/api/me/password', { currentPassword: person.password, newPassword: 'baseball123456' })
    expect(common.status).toBe(400)
    expect(common.body.message).toMatch(/most common/)
    const short = await person.client.post('/api/me/password', { currentPassword: person.password, newPassword: 'abc' })
    expect(short.status).toBe(400)
    expect(short.body.message).toMatch(/newPassword: Use at least 10 characters/)
    expect((await other.get('/api/me')).status).toBe(200)

    const changed = await person.client.post('/api/me/password', { currentPassword: person.password, newPassword: 'green-shoots-in-june' })
    expect(changed.status).toBe(200)
    expect((await person.client.get('/api/me')).status).toBe(200)
    expect((await other.get('/api/me')).status).toBe(401)
    await freshClient().signIn(person.email, 'green-shoots-in-june')
  })
})
