import { hostname } from 'node:os'
import { randomBytes } from 'node:crypto'
import { Op, QueryTypes, Transaction } from 'sequelize'
import { PERSONAL_DATA_KINDS, type PersonalDataKind, type PrivacySettings } from '#shared/utils/schemas/privacy'
import type { PrivacyView, RetentionItem, RetentionReport } from '#shared/types/privacy'
import { AuditEntry, Organisation, Round, settingsOf } from '../db/models'
import { database } from '../db/connection'
import { bumpDataVersion } from './data-version'
import { deleteObjects } from './object-store'
import { PERSONAL_DATA_SOURCES } from './personal-data-sources'

// Retention: after a round closes, each kind of personal data (photos, positions, names) is kept for the days
// the organisation chose, then purged through the sources of personal-data-sources.ts. A scheduled check
// (server/plugins/retention.ts, one server at a time under a lease row) purges what is due and reports it in the
// audit log, which the settings page reads back.

const DAY_MS = 24 * 3600 * 1000

/** Every closed round's items still held, with the day each is due; soonest first. Kinds without a period are kept. */
export async function retentionPlan(organisationId: number, privacy: PrivacySettings): Promise<RetentionItem[]> {
  const kinds = PERSONAL_DATA_KINDS.filter(k => privacy.retentionDays[k] !== null)
  if (!kinds.length) return []
  const rounds = await Round.findAll({ where: { organisationId, status: 'closed', closedAt: { [Op.ne]: null } }, attributes: ['id', 'name', 'closedAt'] })
  if (!rounds.length) return []
  const ids = rounds.map(r => r.id)
  const items: RetentionItem[] = []
  for (const kind of kinds) {
    const held = new Map<number, number>()
    for (const source of PERSONAL_DATA_SOURCES.filter(s => s.kind === kind && s.heldPerRound)) {
      for (const [roundId, n] of await source.heldPerRound!(organisationId, ids)) held.set(roundId, (held.get(roundId) ?? 0) + n)
    }
    for (const round of rounds) {
      const count = held.get(round.id) ?? 0
      if (!count) continue
      items.push({
        roundId: round.id,
        roundName: round.name,
        kind,
        closedAt: round.closedAt!.toISOString(),
        dueAt: new Date(round.closedAt!.getTime() + privacy.retentionDays[kind]! * DAY_MS).toISOString(),
        count
      })
    }
  }
  return items.sort((a, b) => a.dueAt.localeCompare(b.dueAt) || a.roundId - b.roundId)
}

/**
 * Purges one organisation's items that are due at `now`, and records the report in the audit log (by the admin
 * who asked, or by the scheduled check). Photo files go first; a failure after them leaves rows a rerun finds.
 */
export async function purgeOrganisation(organisationId: number, now: Date, actor: { id: number, email: string } | null, ip: string | null = null): Promise<RetentionReport | null> {
  const organisation = await Organisation.findByPk(organisationId)
  if (!organisation) return null
  const due = (await retentionPlan(organisationId, settingsOf(organisation).privacy)).filter(item => Date.parse(item.dueAt) <= now.getTime())
  if (!due.length) return null
  const roundsOf = (kind: PersonalDataKind) => [...new Set(due.filter(i => i.kind === kind).map(i => i.roundId))]

  const keys: string[] = []
  for (const kind of PERSONAL_DATA_KINDS) {
    const roundIds = roundsOf(kind)
    if (!roundIds.length) continue
    for (const source of PERSONAL_DATA_SOURCES.filter(s => s.kind === kind)) keys.push(...await source.roundObjectKeys?.(organisationId, roundIds) ?? [])
  }
  await deleteObjects(keys)

  const counts: Record<PersonalDataKind, number> = { photos: 0, gps: 0, names: 0 }
  const leftover: string[] = []
  const report = await database().transaction({ isolationLevel: Transaction.ISOLATION_LEVELS.READ_COMMITTED }, async (transaction) => {
    for (const kind of PERSONAL_DATA_KINDS) {
      const roundIds = roundsOf(kind)
      if (!roundIds.length) continue
      for (const source of PERSONAL_DATA_SOURCES.filter(s => s.kind === kind && s.purgeRounds)) {
        const done = await source.purgeRounds!({ organisationId, roundIds, transaction, now })
        // The sources that count what they hold (heldPerRound) count what they purge, so the report matches the
        // settings page's plan; the others (audit details following the visits) are not counted twice.
        if (source.heldPerRound) counts[kind] += done.count
        for (const key of done.objectKeys ?? []) if (!keys.includes(key)) leftover.push(key)
      }
    }
    // Free-text answers may be model covariates: fits of these rounds are now built on data that has since changed.
    for (const roundId of roundsOf('names').sort((a, b) => a - b)) await bumpDataVersion(roundId, transaction)
    const result: RetentionReport = { at: now.toISOString(), counts, rounds: new Set(due.map(i => i.roundId)).size }
    await AuditEntry.create({
      organisationId,
      actorUserId: actor?.id ?? null,
      actorEmail: actor?.email ?? null,
      action: 'retention.purge',
      entityType: 'organisation',
      entityId: String(organisationId),
      ip,
      details: { ...result, roundIds: [...new Set(due.map(i => i.roundId))], scheduled: actor === null }
    }, { transaction })
    return result
  })
  if (leftover.length) await deleteObjects(leftover)
  return report
}

/** The scheduled check: every organisation with a retention period set. */
export async function purgeAllDue(now = new Date()): Promise<number> {
  let purged = 0
  for (const organisation of await Organisation.findAll({ attributes: ['id', 'settings'] })) {
    const days = settingsOf(organisation).privacy.retentionDays
    if (PERSONAL_DATA_KINDS.every(k => days[k] === null)) continue
    if (await purgeOrganisation(organisation.id, now, null)) purged++
  }
  return purged
}

/**
 * True when this server holds the retention lease for the coming period: the first server to claim an expired
 * lease runs the check, the others skip it. A row in furrowcast_leases (made by the migrator) rather than a named
 * lock, which on a Galera cluster would be private to one node.
 */
const holder = `${hostname()}:${process.pid}:${randomBytes(6).toString('hex')}`
export async function claimRetentionLease(seconds: number): Promise<boolean> {
  await database().query(`INSERT INTO furrowcast_leases (name, holder, expires_at) VALUES ('retention', ?, NOW(3) + INTERVAL ? SECOND)
    ON DUPLICATE KEY UPDATE holder = IF(expires_at < NOW(3), VALUES(holder), holder),
      expires_at = IF(holder = VALUES(holder), VALUES(expires_at), expires_at)`, { replacements: [holder, seconds] })
  const [row] = await database().query<{ holder: string }>('SELECT holder FROM furrowcast_leases WHERE name = \'retention\'', { type: QueryTypes.SELECT })
  return row?.holder === holder
}

export async function privacyView(organisationId: number): Promise<PrivacyView> {
  const organisation = await Organisation.findByPk(organisationId)
  if (!organisation) throw createError({ statusCode: 404, message: 'Organisation not found.' })
  const settings = settingsOf(organisation).privacy
  const [upcoming, last] = await Promise.all([
    retentionPlan(organisationId, settings),
    AuditEntry.findOne({ where: { organisationId, action: 'retention.purge' }, order: [['id', 'DESC']] })
  ])
  const details = last?.details as (RetentionReport & Record<string, unknown>) | null | undefined
  return {
    settings,
    upcoming,
    lastPurge: details ? { at: details.at, counts: details.counts, rounds: details.rounds } : null,
    checkMinutes: serverConfig().RETENTION_CHECK_MINUTES
  }
}
