import net from 'node:net'
import { SMTPServer } from 'smtp-server'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { MailMessage } from '../../server/db/models'
import { BLANKED_BODY, deliverDueMail, retryDelayMs } from '../../server/utils/mail'
import { closeTestDatabase, testDatabase } from '../support/database'
import { demoUser, freshClient } from '../support/server'
import { inviteThroughMail } from '../support/team'

// The queue's sender with real nodemailer transports: one to a loopback port where nothing listens (a mail
// server that is down), one to a small SMTP server of this test. Messages are created due an hour from now
// and delivered with a clock set later, so the test server's own retry loop leaves them alone.
const HOUR = 3_600_000
const received: Array<{ to: string[], raw: string }> = []
let smtp: SMTPServer
let smtpPort: number
let closedPort: number

async function freePort(): Promise<number> {
  const probe = net.createServer()
  await new Promise<void>(resolve => probe.listen(0, '127.0.0.1', resolve))
  const port = (probe.address() as net.AddressInfo).port
  await new Promise(resolve => probe.close(resolve))
  return port
}

beforeAll(async () => {
  testDatabase()
  closedPort = await freePort()
  smtp = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS'],
    onData(stream, session, callback) {
      const chunks: Buffer[] = []
      stream.on('data', (chunk: Buffer) => chunks.push(chunk))
      stream.on('end', () => {
        received.push({ to: session.envelope.rcptTo.map(r => r.address), raw: Buffer.concat(chunks).toString('utf8') })
        callback()
      })
    }
  })
  await new Promise<void>(resolve => smtp.listen(0, '127.0.0.1', () => resolve()))
  smtpPort = (smtp.server.address() as net.AddressInfo).port
})
afterAll(async () => {
  await new Promise(resolve => smtp.close(resolve))
  await closeTestDatabase()
})

const down = () => `smtp://127.0.0.1:${closedPort}`
const up = () => `smtp://127.0.0.1:${smtpPort}`

async function queued(overrides: Partial<{ sensitive: boolean, attempts: number }> = {}) {
  return MailMessage.create({
    organisationId: null,
    userId: null,
    kind: 'queue-test',
    toAddress: `queue-${Math.random().toString(36).slice(2, 8)}@team-test.example`,
    subject: 'Queue test',
    textBody: 'Follow https://furrowcast.example/welcome?token=1.secret',
    htmlBody: null,
    sensitive: overrides.sensitive ?? false,
    attempts: overrides.attempts ?? 0,
    lastError: null,
    nextAttemptAt: new Date(Date.now() + HOUR),
    sentAt: null
  })
}

describe('the mail queue', () => {
  it('keeps a message queued with its error while the mail server is down, and sends it on retry', async () => {
    const message = await queued({ sensitive: true })
    const firstTry = new Date(Date.now() + 2 * HOUR)
    const outcome = await deliverDueMail({ smtpUrl: down(), from: 'Furrowcast <test@furrowcast.example>', maxAttempts: 5, now: firstTry, ids: [message.id] })
    expect(outcome).toEqual({ sent: 0, retrying: 1, failed: 0 })
    await message.reload()
    expect(message.status).toBe('queued')
    expect(message.attempts).toBe(1)
    expect(message.lastError).toMatch(/ECONNREFUSED|connect/i)
    expect(message.nextAttemptAt!.getTime() - firstTry.getTime()).toBeGreaterThanOrEqual(retryDelayMs(1) - 1000)
    expect(message.textBody).toContain('token=1.secret')

    // Not yet due: nothing happens.
    expect(await deliverDueMail({ smtpUrl: up(), from: 'test@furrowcast.example', maxAttempts: 5, now: firstTry, ids: [message.id] })).toEqual({ sent: 0, retrying: 0, failed: 0 })

    const later = new Date(firstTry.getTime() + retryDelayMs(1) + 1000)
    expect(await deliverDueMail({ smtpUrl: up(), from: 'test@furrowcast.example', maxAttempts: 5, now: later, ids: [message.id] })).toEqual({ sent: 1, retrying: 0, failed: 0 })
    await message.reload()
    expect(message).toMatchObject({ status: 'sent', attempts: 2, lastError: null, nextAttemptAt: null })
    expect(message.sentAt).not.toBeNull()
    // It held a link: the stored body is blanked once sent.
    expect(message.textBody).toBe(BLANKED_BODY)
    const got = received.find(r => r.to.includes(message.toAddress))
    expect(got?.raw).toContain('Subject: Queue test')
    expect(got?.raw).toContain(`X-Furrowcast-Message: ${message.id}`)
  })

  it('marks a message failed after the last attempt', async () => {
    const message = await queued({ attempts: 2 })
    const outcome = await deliverDueMail({ smtpUrl: down(), from: 'test@furrowcast.example', maxAttempts: 3, now: new Date(Date.now() + 2 * HOUR), ids: [message.id] })
    expect(outcome.failed).toBe(1)
    await message.reload()
    expect(message).toMatchObject({ status: 'failed', attempts: 3, nextAttemptAt: null })
    expect(message.lastError).toBeTruthy()
  })

  it('sends a message once even when two senders run at the same moment', async () => {
    const message = await queued()
    const options = { smtpUrl: up(), from: 'test@furrowcast.example', maxAttempts: 5, now: new Date(Date.now() + 2 * HOUR), ids: [message.id] }
    const [a, b] = await Promise.all([deliverDueMail(options), deliverDueMail(options)])
    expect(a.sent + b.sent).toBe(1)
    expect(received.filter(r => r.to.includes(message.toAddress))).toHaveLength(1)
  })

  it('shows an admin, in the people list, an invitation that the mail server has not taken yet', async () => {
    const admin = freshClient()
    await admin.signIn(demoUser('admin').email)
    const invited = await inviteThroughMail(admin, { role: 'enumerator' })
    const sent = (await MailMessage.findOne({ where: { userId: invited.userId } }))!
    // A later message about the same person, which meets the mail server while it is down.
    const stuck = await MailMessage.create({
      organisationId: sent.organisationId,
      userId: invited.userId,
      kind: 'invitation',
      toAddress: invited.email,
      subject: sent.subject,
      textBody: 'a new link',
      htmlBody: null,
      lastError: null,
      nextAttemptAt: new Date(Date.now() + HOUR),
      sentAt: null
    })
    await deliverDueMail({ smtpUrl: down(), from: 'test@furrowcast.example', maxAttempts: 5, now: new Date(Date.now() + 2 * HOUR), ids: [stuck.id] })
    const list = await admin.get<{ items: Array<{ mail: { id: number, status: string, attempts: number, lastError: string, nextAttemptAt: string } }> }>(
      `/api/people?search=${encodeURIComponent(invited.email)}`
    )
    expect(list.body.items[0]!.mail).toMatchObject({ id: stuck.id, status: 'queued', attempts: 1 })
    expect(list.body.items[0]!.mail.lastError).toMatch(/ECONNREFUSED|connect/i)
    expect(new Date(list.body.items[0]!.mail.nextAttemptAt).getTime()).toBeGreaterThan(Date.now())
    await stuck.destroy()
  })

  it('backs off 30 s, 1 min, 2 min … up to one hour', () => {
    expect([1, 2, 3, 4].map(retryDelayMs)).toEqual([30_000, 60_000, 120_000, 240_000])
    expect(retryDelayMs(20)).toBe(HOUR)
  })
})
