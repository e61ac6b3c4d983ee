import { readFile, readdir } from 'node:fs/promises'
import path from 'node:path'
import { simpleParser } from 'mailparser'

// Reads what the SMTP catcher kept (OUTBOX_DIR, set by `npm test`): the real path a message takes.
export interface CaughtMail {
  id: string
  to: string[]
  subject: string
  text: string
  html: string
  headers: Map<string, unknown>
}

function outboxDir(): string {
  const dir = process.env.OUTBOX_DIR
  if (!dir) throw new Error('OUTBOX_DIR is not set: run these tests through `npm test`, which starts the mail catcher.')
  return dir
}

/** Every message caught for this address, oldest first. */
export async function mailsTo(address: string): Promise<CaughtMail[]> {
  const dir = outboxDir()
  const names = (await readdir(dir).catch(() => [] as string[])).filter(n => n.endsWith('.json')).sort()
  const found: CaughtMail[] = []
  for (const name of names) {
    const envelope = JSON.parse(await readFile(path.join(dir, name), 'utf8')) as { id: string, to: string[] }
    if (!envelope.to.includes(address)) continue
    const parsed = await simpleParser(await readFile(path.join(dir, `${envelope.id}.eml`)))
    found.push({
      id: envelope.id,
      to: envelope.to,
      subject: parsed.subject ?? '',
      text: parsed.text ?? '',
      html: typeof parsed.html === 'string' ? parsed.html : '',
      headers: parsed.headers
    })
  }
  return found
}

/** Waits (up to 15 s) until the address has received `count` messages, and returns the last of them. */
export async function waitForMail(address: string, count = 1): Promise<CaughtMail> {
  const deadline = Date.now() + 15_000
  for (;;) {
    const mails = await mailsTo(address)
    if (mails.length >= count) return mails[count - 1]!
    if (Date.now() > deadline) throw new Error(`no message number ${count} for ${address} in the outbox (found ${mails.length})`)
    await new Promise(resolve => setTimeout(resolve, 200))
  }
}

/** The token of the first invitation or reset link in a message's text. */
export function linkToken(mail: CaughtMail, page: 'welcome' | 'reset'): { url: string, token: string } {
  const match = new RegExp(`(https?://\\S+/${page}\\?token=([^\\s&]+))`).exec(mail.text)
  if (!match) throw new Error(`no /${page} link in the message "${mail.subject}"`)
  return { url: match[1]!, token: decodeURIComponent(match[2]!) }
}

export const uniqueEmail = (label: string) => `${label}-${Date.now().toString(36)}-${Math.random().toString(36).slice(2, 7)}@team-test.example`
