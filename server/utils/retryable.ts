import { type H3Event, setResponseHeader } from 'h3'

// One answer for every kind of passing database trouble: 503 with Retry-After, never 500. The tablet and any
// other client retry such an answer later; nothing was written, because the failed transaction rolled back.

/** MariaDB error numbers that mean "try again": the state of the server, not the request, is at fault. */
const RETRYABLE_ERRNO = new Set([
  1040, // too many connections
  1047, // Galera: WSREP has not yet prepared node for application use
  1053, // server shutdown in progress
  1205, // lock wait timeout
  1213, // deadlock (and, on Galera, a certification conflict at commit)
  1290, // --read-only
  1317, // query interrupted
  1792, // read-only transaction
  1927, // connection killed
  1969, // max_statement_time exceeded
  2002, 2003, 2006, 2013, // cannot connect, server gone away, lost connection
  4031 // disconnected by the server for inactivity
])

/** Sequelize's and sequelize-pool's names for "no connection now". */
const RETRYABLE_NAMES = new Set([
  'SequelizeConnectionError', 'SequelizeConnectionRefusedError', 'SequelizeConnectionAcquireTimeoutError',
  'SequelizeConnectionTimedOutError', 'SequelizeHostNotReachableError', 'SequelizeHostNotFoundError',
  'SequelizeInvalidConnectionError', 'SequelizeTimeoutError', 'TimeoutError'
])

interface DriverError { name?: string, errno?: number, sqlState?: string, fatal?: boolean, code?: string, cause?: unknown, original?: unknown, parent?: unknown }

/** Why an error is passing database trouble, or null when it is not (a bug, bad data). Follows wrapped causes. */
export function retryableReason(error: unknown): string | null {
  const seen = new Set<unknown>()
  let current: unknown = error
  const queue: unknown[] = [error]
  while (queue.length) {
    current = queue.shift()
    if (!current || typeof current !== 'object' || seen.has(current)) continue
    seen.add(current)
    const e = current as DriverError
    if (e.errno !== undefined && RETRYABLE_ERRNO.has(e.errno)) return e.errno === 1213 || e.errno === 1205 ? 'busy' : 'unavailable'
    // SQLSTATE class 08: connection exceptions; a fatal driver error means the connection itself is gone. Only the
    // driver's own errors count: Nuxt marks page errors `fatal` too (a 403 page must stay a 403).
    const driverError = e.name === 'SqlError' || e.sqlState !== undefined || e.errno !== undefined
    if (e.sqlState?.startsWith('08') || (driverError && e.fatal === true)) return 'unavailable'
    if (e.code === 'ECONNREFUSED' || e.code === 'ECONNRESET' || e.code === 'ETIMEDOUT') return 'unavailable'
    if (e.name && RETRYABLE_NAMES.has(e.name)) return 'unavailable'
    queue.push(e.cause, e.original, e.parent)
  }
  return null
}

/** A deadlock or lock wait that one more attempt of the same transaction may well get past. */
export function isLockConflict(error: unknown): boolean {
  return retryableReason(error) === 'busy'
}

/** Seconds the client should wait; a little jitter spreads the returning crowd. */
export function retryAfterSeconds(base = 2): number {
  return base + Math.floor(Math.random() * 3)
}

export const BUSY_MESSAGE = 'The server is busy. Nothing was lost; please try again in a moment.'
export const UNAVAILABLE_MESSAGE = 'The database is not reachable just now. Nothing was lost; please try again in a moment.'

let lastUnavailableAt = 0

export function noteDatabaseUnavailable(): void {
  lastUnavailableAt = Date.now()
}

/** Whether a request saw the database unreachable after `since` (ms epoch): queued work then fails fast. */
export function databaseFailedSince(since: number): boolean {
  return lastUnavailableAt >= since
}

/** Turns an error into the 503 the client sees (used by the error hook for every route). */
export function markRetryable(event: H3Event, error: { statusCode?: number, statusMessage?: string, message: string, unhandled?: boolean, cause?: unknown }): boolean {
  const reason = error.statusCode === 503 ? 'unavailable' : retryableReason(error.cause ?? error)
  if (!reason) return false
  if (reason === 'unavailable' && error.statusCode !== 503) noteDatabaseUnavailable()
  error.statusCode = 503
  error.statusMessage = 'Service Unavailable'
  if (error.unhandled !== false && error.cause !== undefined) error.message = reason === 'busy' ? BUSY_MESSAGE : UNAVAILABLE_MESSAGE
  // Not an unexpected failure any more: the message goes to the client and the stack trace is not logged.
  error.unhandled = false
  if (!event.node.res.headersSent) setResponseHeader(event, 'Retry-After', retryAfterSeconds())
  return true
}
