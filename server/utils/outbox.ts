import { readdir, readFile } from 'node:fs/promises'
import path from 'node:path'
import { simpleParser } from 'mailparser'
import type { OutboxAnswer, OutboxItem } from '#shared/types/team'
import { MailMessage } from '../db/models'

const LOOPBACK = new Set(['127.0.0.1', 'localhost', '[::1]', '::1'])
const SHOWN = 100

/**
 * The outbox page reads the local mail catcher's folder, so it is open only when the catcher is in use:
 * OUTBOX_DIR set and mail going to a server on this machine. With a real SMTP relay there is nothing to read.
 */
export function outboxStatus(): { enabled: boolean, reason?: string } {
  const config = serverConfig()
  if (!config.OUTBOX_DIR) return { enabled: false, reason: 'The outbox is shown only with the local mail catcher (OUTBOX_DIR is not set).' }
  let host = ''
  try {
    host = new URL(config.SMTP_URL).hostname
  }
  catch { /* an SMTP_URL that is not a URL is not the catcher */ }
  if (!LOOPBACK.has(host)) return { enabled: false, reason: 'Mail goes to a real mail server, so there is no local outbox to show.' }
  return { enabled: true }
}

/** The newest messages the catcher kept that this organisation sent (matched through the X-Furrowcast-Message header). */
export async function readOutbox(organisationId: number): Promise<OutboxAnswer> {
  const status = outboxStatus()
  if (!status.enabled) return { ...status, items: [] }
  const dir = serverConfig().OUTBOX_DIR!
  const names = await readdir(dir).catch(() => [] as string[])
  const envelopes = names.filter(name => name.endsWith('.json')).sort().reverse().slice(0, SHOWN * 3)
  const parsed: Array<OutboxItem & { messageId: number | null }> = []
  for (const name of envelopes) {
    const id = name.slice(0, -'.json'.length)
    try {
      const envelope = JSON.parse(await readFile(path.join(dir, name), 'utf8')) as { receivedAt: string, from: string | null, to: string[] }
      const mail = await simpleParser(await readFile(path.join(dir, `${id}.eml`)))
      const header = mail.headers.get('x-furrowcast-message')
      parsed.push({
        id,
        receivedAt: envelope.receivedAt,
        from: envelope.from,
        to: envelope.to,
        subject: mail.subject ?? '(no subject)',
        text: mail.text ?? '',
        messageId: typeof header === 'string' && /^\d+$/.test(header) ? Number(header) : null
      })
    }
    catch { /* a file being written or not a message: skip it */ }
  }
  const ids = parsed.map(item => item.messageId).filter((id): id is number => id !== null)
  const ours = new Set((ids.length
    ? await MailMessage.findAll({ where: { id: ids, organisationId }, attributes: ['id'] })
    : []).map(m => m.id))
  const items = parsed.filter(item => item.messageId !== null && ours.has(item.messageId)).slice(0, SHOWN)
  return { enabled: true, items: items.map(({ messageId: _, ...item }) => item) }
}
