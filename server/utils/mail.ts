import nodemailer, { type Transporter } from 'nodemailer'
import { Op, type Transaction } from 'sequelize'
import { MailMessage } from '../db/models'
import { serverConfig } from './config'

export interface OutgoingMail {
  to: string
  subject: string
  text: string
  html?: string
  /** What the message is for: 'invitation', 'reset', 'round-published', 'visit-sent-back', … */
  kind: string
  organisationId?: number | null
  /** The person the message concerns, so their row in the people table can show its state. */
  userId?: number | null
  /** Holds a single-use link: the bodies are blanked once the message has been handed over or has failed. */
  sensitive?: boolean
  /** Earlier unsent messages of the same kind to the same person are dropped (their links are void anyway). */
  supersedes?: boolean
}

export interface DeliveryOptions {
  smtpUrl: string
  from: string
  maxAttempts: number
  now?: Date
  /** Only these messages (the ones a change has just queued). */
  ids?: number[]
  limit?: number
}

export const BLANKED_BODY = '(Removed once the message left: it held a single-use link.)'
// While one server is sending a message, others skip it; a crash mid-send frees it again after this.
const CLAIM_MS = 2 * 60_000
const RETRY_BASE_MS = 30_000
const RETRY_MAX_MS = 60 * 60_000

/** Waiting time after the n-th failed attempt: 30 s, 1 min, 2 min, … at most one hour. */
export function retryDelayMs(attempts: number): number {
  return Math.min(RETRY_MAX_MS, RETRY_BASE_MS * 2 ** Math.max(0, attempts - 1))
}

/**
 * Writes the message to the queue, in the caller's transaction, and sends it right after the commit.
 * If the mail server is down the message stays queued and the retry loop (server/plugins/mail.ts) sends it later.
 */
export async function queueMail(mail: OutgoingMail, transaction?: Transaction): Promise<MailMessage> {
  if (mail.supersedes && mail.userId) {
    await MailMessage.update(
      { status: 'failed', lastError: 'Replaced by a newer message.', nextAttemptAt: null, textBody: BLANKED_BODY, htmlBody: null },
      { where: { userId: mail.userId, kind: mail.kind, status: 'queued' }, transaction }
    )
  }
  const message = await MailMessage.create({
    organisationId: mail.organisationId ?? null,
    userId: mail.userId ?? null,
    kind: mail.kind,
    toAddress: mail.to,
    subject: mail.subject.slice(0, 200),
    textBody: mail.text,
    htmlBody: mail.html ?? null,
    sensitive: mail.sensitive ?? false,
    lastError: null,
    nextAttemptAt: new Date(),
    sentAt: null
  }, { transaction })
  const send = () => {
    deliverDueMail({ ...configuredDelivery(), ids: [message.id] }).catch((error: unknown) => {
      console.error('[furrowcast] mail delivery failed:', error)
    })
  }
  if (transaction) transaction.afterCommit(send)
  else send()
  return message
}

export function configuredDelivery(): DeliveryOptions {
  const config = serverConfig()
  return { smtpUrl: config.SMTP_URL, from: config.MAIL_FROM, maxAttempts: config.MAIL_MAX_ATTEMPTS }
}

const transports = new Map<string, Transporter>()

function transportFor(smtpUrl: string): Transporter {
  let transport = transports.get(smtpUrl)
  if (!transport) {
    const url = new URL(smtpUrl)
    for (const [key, value] of Object.entries({ connectionTimeout: '10000', greetingTimeout: '10000', socketTimeout: '30000' })) {
      if (!url.searchParams.has(key)) url.searchParams.set(key, value)
    }
    // nodemailer reads transport options from the URL's query, so SMTP_URL can also tune them.
    transport = nodemailer.createTransport(url.toString())
    transports.set(smtpUrl, transport)
  }
  return transport
}

/**
 * Sends the queued messages that are due, one by one. Each is claimed first with a conditional update, so two
 * servers never send the same message. Returns how many were sent, put back for a retry, or given up.
 */
export async function deliverDueMail(options: DeliveryOptions) {
  const now = options.now ?? new Date()
  const due = await MailMessage.findAll({
    where: {
      status: 'queued',
      nextAttemptAt: { [Op.lte]: now },
      ...(options.ids ? { id: options.ids } : {})
    },
    order: [['nextAttemptAt', 'ASC'], ['id', 'ASC']],
    limit: options.limit ?? 20
  })
  const outcome = { sent: 0, retrying: 0, failed: 0 }
  for (const message of due) {
    const [claimed] = await MailMessage.update(
      { nextAttemptAt: new Date(now.getTime() + CLAIM_MS) },
      { where: { id: message.id, status: 'queued', nextAttemptAt: { [Op.lte]: now } } }
    )
    if (claimed !== 1) continue
    const attempts = message.attempts + 1
    const blank = message.sensitive ? { textBody: BLANKED_BODY, htmlBody: null } : {}
    try {
      await transportFor(options.smtpUrl).sendMail({
        from: options.from,
        to: message.toAddress,
        subject: message.subject,
        text: message.textBody,
        html: message.htmlBody ?? undefined,
        headers: { 'X-Furrowcast-Message': String(message.id) }
      })
      await message.update({ status: 'sent', attempts, sentAt: new Date(), lastError: null, nextAttemptAt: null, ...blank })
      outcome.sent += 1
    }
    catch (error) {
      const lastError = (error instanceof Error ? error.message : String(error)).slice(0, 500)
      if (attempts >= options.maxAttempts) {
        await message.update({ status: 'failed', attempts, lastError, nextAttemptAt: null, ...blank })
        outcome.failed += 1
      }
      else {
        await message.update({ attempts, lastError, nextAttemptAt: new Date(now.getTime() + retryDelayMs(attempts)) })
        outcome.retrying += 1
      }
    }
  }
  return outcome
}
