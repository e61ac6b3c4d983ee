import { QueryTypes } from 'sequelize'
import { testDatabase } from './database'
import { storedColumnsSql, tableDigestSql } from './table-digest'

// "Nothing was written": the row count of every table, plus a checksum of the content of the tables a refused
// request could change in place (settings, questionnaires, visits). Tables that count requests by design (sign-in
// and rate limits, sessions and their last-seen times) and rows that other work updates in the background (the
// mail queue's send state, fits finishing) are compared by count only, or not at all; so is the lease row the
// scheduled retention check takes and lets go on its own clock.
const NOT_COMPARED = /^(rate_events|sign_in_attempts|SequelizeMeta|furrowcast_leases)$|session/i
const COUNT_ONLY = /^(users|mail_messages|model_runs|audit_entries)$/

export async function dataFingerprint(): Promise<Record<string, string>> {
  const db = testDatabase()
  const tables = (await db.query<{ name: string }>(
    'SELECT TABLE_NAME AS name FROM information_schema.TABLES WHERE TABLE_SCHEMA = DATABASE() AND TABLE_TYPE = \'BASE TABLE\' ORDER BY TABLE_NAME',
    { type: QueryTypes.SELECT })).map(t => t.name).filter(t => !NOT_COMPARED.test(t))
  const counts = await db.query<Record<string, number>>(
    `SELECT ${tables.map(t => `(SELECT COUNT(*) FROM \`${t}\`) AS \`${t}\``).join(', ')}`, { type: QueryTypes.SELECT })
  const schema = (await db.query<{ name: string }>('SELECT DATABASE() AS name', { type: QueryTypes.SELECT }))[0]!.name
  const columns = new Map((await db.query<{ name: string, columns: string }>(storedColumnsSql(schema), { type: QueryTypes.SELECT })).map(r => [r.name, r.columns]))
  const out: Record<string, string> = {}
  for (const t of tables) out[t] = `rows ${counts[0]![t]}`
  for (const t of tables.filter(t => !COUNT_ONLY.test(t))) {
    const [row] = await db.query<{ digest: string | number }>(tableDigestSql(schema, t, columns.get(t)!), { type: QueryTypes.SELECT })
    out[t] += ` digest ${row!.digest}`
  }
  return out
}
