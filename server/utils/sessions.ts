import { createHash, randomBytes } from 'node:crypto'
import type { H3Event } from 'h3'
import { Op, type Transaction } from 'sequelize'
import type { Role } from '#shared/utils/roles'
import type { ActiveSession } from '#shared/types/sessions'
import { deviceLabel } from '#shared/utils/device-label'
import { Organisation, SessionRecord, User } from '../db/models'
import type { SignedInUser } from './access'

/** Why a session ended; kept on the row for the audit trail and the tests. */
export type SessionEndReason = 'signed_out' | 'ended_by_user' | 'ended_by_admin' | 'deactivated' | 'password_changed' | 'password_reset'

// last_seen_at is written at most this often per session: enough for idle timeouts counted in minutes and
// for "last seen" on the account page, without one write per request.
const LAST_SEEN_EVERY_MS = 60_000

/** Idle timeout and absolute lifetime for a role: tablets work offline for weeks, office browsers do not. */
export function sessionLifetime(role: Role) {
  const config = serverConfig()
  const field = role === 'enumerator'
  return {
    idleMs: (field ? config.FIELD_SESSION_IDLE_MINUTES : config.SESSION_IDLE_MINUTES) * 60_000,
    maxMs: (field ? config.FIELD_SESSION_MAX_MINUTES : config.SESSION_MAX_MINUTES) * 60_000
  }
}

function hashToken(token: string) {
  return createHash('sha256').update(token).digest('hex')
}

/** Records a new session for the user and puts only its token into the sealed cookie. */
export async function startSession(event: H3Event, user: SignedInUser) {
  const token = randomBytes(32).toString('base64url')
  const now = new Date()
  await SessionRecord.create({
    userId: user.id,
    tokenHash: hashToken(token),
    lastSeenAt: now,
    expiresAt: new Date(now.getTime() + sessionLifetime(user.role).maxMs),
    userAgent: (getHeader(event, 'user-agent') ?? '').slice(0, 255) || null,
    ip: clientIp(event)
  })
  await replaceUserSession(event, { secure: { token } })
  delete event.context.furrowcastSession
}

export interface CurrentSession {
  record: SessionRecord
  user: SignedInUser
}

interface SessionLookup {
  current: CurrentSession | null
  /** Why there is no live session, in words for the 401. */
  problem: string
}

const ENDED: Record<string, string> = {
  password_changed: 'Your password was changed, so this session has ended. Sign in again.',
  password_reset: 'Your password was changed, so this session has ended. Sign in again.',
  deactivated: 'This account is no longer active. Ask your administrator.',
  ended_by_admin: 'An administrator ended this session. Sign in again.'
}

/**
 * The caller's live session and its user, read in one query and kept for the rest of the request (the
 * deny-by-default middleware, requireRole and nuxt-auth-utils' session read all ask). Null when there is
 * none, or when it was revoked, is idle too long, is past its lifetime, or its user is deactivated.
 */
export async function currentSession(event: H3Event): Promise<CurrentSession | null> {
  return (await lookUpSession(event)).current
}

/** 401 with the reason the caller's session is not live. */
export async function sessionRefusal(event: H3Event) {
  const { problem } = await lookUpSession(event)
  // An open page tells a deactivation apart (app/plugins/account-check.client.ts signs the person out with a message).
  return createError({ statusCode: 401, message: problem, ...(problem === ENDED.deactivated ? { data: { reason: 'deactivated' } } : {}) })
}

function lookUpSession(event: H3Event): Promise<SessionLookup> {
  event.context.furrowcastSession ??= findSession(event)
  return event.context.furrowcastSession as Promise<SessionLookup>
}

async function findSession(event: H3Event): Promise<SessionLookup> {
  const refused = (problem: string) => ({ current: null, problem })
  const token = (await getUserSession(event)).secure?.token
  if (typeof token !== 'string') return refused('Sign in to continue.')
  const record = await SessionRecord.findOne({
    where: { tokenHash: hashToken(token) },
    include: [{ model: User, as: 'user', required: true, include: [{ model: Organisation, as: 'organisation' }] }]
  })
  const user = record?.user as SignedInUser | undefined
  if (!record || !user) return refused('Sign in to continue.')
  if (!user.active) return refused(ENDED.deactivated!)
  if (record.revokedAt) return refused(ENDED[record.revokedReason ?? ''] ?? 'This session has ended. Sign in again.')
  const now = Date.now()
  const { idleMs, maxMs } = sessionLifetime(user.role)
  const endsAt = Math.min(record.expiresAt.getTime(), record.createdAt.getTime() + maxMs)
  if (now >= endsAt || now >= record.lastSeenAt.getTime() + idleMs) return refused('Your session has expired. Sign in again.')
  if (now - record.lastSeenAt.getTime() >= LAST_SEEN_EVERY_MS) {
    record.lastSeenAt = new Date(now)
    await SessionRecord.update({ lastSeenAt: record.lastSeenAt }, { where: { id: record.id } })
  }
  return { current: { record, user }, problem: '' }
}

/** Revokes the session whose token is in this cookie data; nuxt-auth-utils' clear hook calls it. */
export async function revokeSessionByToken(token: unknown, reason: SessionEndReason) {
  if (typeof token !== 'string') return
  await SessionRecord.update({ revokedAt: new Date(), revokedReason: reason }, { where: { tokenHash: hashToken(token), revokedAt: null } })
}

/** Ends every open session of a person, except (optionally) one: the caller's own after a password change. */
export async function revokeSessionsOf(userId: number, reason: SessionEndReason, options: { except?: number, transaction?: Transaction } = {}) {
  const where = { userId, revokedAt: null, ...(options.except ? { id: { [Op.ne]: options.except } } : {}) }
  const [count] = await SessionRecord.update({ revokedAt: new Date(), revokedReason: reason }, { where, transaction: options.transaction })
  return count
}

/** One of the caller's own sessions; 404 for an id that is not theirs or already ended. */
export async function revokeOwnSession(userId: number, sessionId: number) {
  const [count] = await SessionRecord.update(
    { revokedAt: new Date(), revokedReason: 'ended_by_user' },
    { where: { id: sessionId, userId, revokedAt: null } }
  )
  if (!count) throw createError({ statusCode: 404, message: 'There is no such open session.' })
}

/** A person's open sessions, newest activity first, marking the caller's own. */
export async function listActiveSessions(user: SignedInUser, currentId: number | undefined): Promise<ActiveSession[]> {
  const { idleMs, maxMs } = sessionLifetime(user.role)
  const now = Date.now()
  const rows = await SessionRecord.findAll({
    where: { userId: user.id, revokedAt: null, expiresAt: { [Op.gt]: new Date(now) }, lastSeenAt: { [Op.gt]: new Date(now - idleMs) } },
    order: [['lastSeenAt', 'DESC'], ['id', 'DESC']],
    limit: 200
  })
  return rows
    .filter(row => row.createdAt.getTime() + maxMs > now)
    .map(row => ({
      id: row.id,
      device: deviceLabel(row.userAgent),
      ip: row.ip,
      createdAt: row.createdAt.toISOString(),
      lastSeenAt: row.lastSeenAt.toISOString(),
      current: row.id === currentId
    }))
}

/** Open sessions per person, for the people table. */
export async function activeSessionCounts(userIds: number[]): Promise<Map<number, number>> {
  if (!userIds.length) return new Map()
  const rows = await SessionRecord.findAll({
    attributes: ['userId', [SessionRecord.sequelize!.fn('COUNT', SessionRecord.sequelize!.col('id')), 'open']],
    where: { userId: userIds, revokedAt: null, expiresAt: { [Op.gt]: new Date() } },
    group: ['userId'],
    raw: true
  }) as unknown as { userId: number, open: number }[]
  return new Map(rows.map(row => [row.userId, Number(row.open)]))
}
