import { QueryTypes } from 'sequelize'
import { testDatabase } from './database'

// "Nothing was written": the row count of every table, plus a checksum of the content of the tables a refused
// request could change in place (settings, questionnaires, visits). Tables that count requests by design (sign-in
// and rate limits, sessions and their last-seen times) and rows that other work updates in the background (the
// mail queue's send state, fits finishing) are compared by count only, or not at all.
const NOT_COMPARED = /^(rate_events|sign_in_attempts|SequelizeMeta)$|session/i
const COUNT_ONLY = /^(users|mail_messages|model_runs|audit_entries)$/

export async function dataFingerprint(): Promise<Record<string, string>> {
  const db = testDatabase()
  const tables = (await db.query<{ name: string }>(
    'SELECT TABLE_NAME AS name FROM information_schema.TABLES WHERE TABLE_SCHEMA = DATABASE() AND TABLE_TYPE = \'BASE TABLE\' ORDER BY TABLE_NAME',
    { type: QueryTypes.SELECT })).map(t => t.name).filter(t => !NOT_COMPARED.test(t))
  const counts = await db.query<Record<string, number>>(
    `SELECT ${tables.map(t => `(SELECT COUNT(*) FROM \`${t}\`) AS \`${t}\``).join(', ')}`, { type: QueryTypes.SELECT })
  const checked = tables.filter(t => !COUNT_ONLY.test(t))
  const sums = await db.query<{ Table: string, Checksum: string | number }>(`CHECKSUM TABLE ${checked.map(t => `\`${t}\``).join(', ')}`, { type: QueryTypes.SELECT })
  const out: Record<string, string> = {}
  for (const t of tables) out[t] = `rows ${counts[0]![t]}`
  for (const s of sums) out[s.Table.split('.').pop()!] += ` checksum ${s.Checksum}`
  return out
}
