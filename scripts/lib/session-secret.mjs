import { randomBytes } from 'node:crypto'
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs'
import path from 'node:path'
import { DATA } from './system.mjs'

/** The cookie-sealing secret: from NUXT_SESSION_PASSWORD, else one generated into .data/ on first start. */
export function sessionSecret(fileName = 'session-secret') {
  if (process.env.NUXT_SESSION_PASSWORD) return process.env.NUXT_SESSION_PASSWORD
  const file = path.join(DATA, fileName)
  if (!existsSync(file)) {
    mkdirSync(DATA, { recursive: true })
    writeFileSync(file, randomBytes(32).toString('hex'), { mode: 0o600 })
  }
  return readFileSync(file, 'utf8').trim()
}
