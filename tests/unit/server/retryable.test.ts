import { describe, expect, it } from 'vitest'
import { isLockConflict, retryableReason } from '../../../server/utils/retryable'

// Which database errors become 503 with Retry-After. The error shapes are those of Sequelize 6 wrapping the
// mariadb driver (name, parent/original, errno, sqlState, fatal), as the app sees them.
const sequelizeError = (name: string, original: object) => Object.assign(new Error('x'), { name, original, parent: original })

describe('retryable database errors', () => {
  it('treats deadlocks, lock waits and Galera certification conflicts as busy', () => {
    expect(retryableReason(sequelizeError('SequelizeDatabaseError', { errno: 1213, sqlState: '40001' }))).toBe('busy')
    expect(retryableReason(sequelizeError('SequelizeDatabaseError', { errno: 1205, sqlState: 'HY000' }))).toBe('busy')
    expect(isLockConflict(sequelizeError('SequelizeDatabaseError', { errno: 1213 }))).toBe(true)
  })

  it('treats a lost, refused or timed-out connection, a read-only or unready node as unavailable', () => {
    expect(retryableReason(Object.assign(new Error('pool'), { name: 'SequelizeConnectionAcquireTimeoutError' }))).toBe('unavailable')
    expect(retryableReason(sequelizeError('SequelizeConnectionRefusedError', { code: 'ECONNREFUSED' }))).toBe('unavailable')
    expect(retryableReason(sequelizeError('SequelizeDatabaseError', { fatal: true, errno: 45026, code: 'ER_SOCKET_TIMEOUT' }))).toBe('unavailable')
    expect(retryableReason(sequelizeError('SequelizeDatabaseError', { errno: 1047, sqlState: '08S01' }))).toBe('unavailable')
    expect(retryableReason(sequelizeError('SequelizeDatabaseError', { errno: 1290 }))).toBe('unavailable')
    // Wrapped once more, as h3 wraps an unhandled error in its `cause`.
    expect(retryableReason({ statusCode: 500, cause: sequelizeError('SequelizeDatabaseError', { errno: 2013 }) })).toBe('unavailable')
    expect(isLockConflict(sequelizeError('SequelizeDatabaseError', { errno: 2013 }))).toBe(false)
  })

  it('leaves bugs and bad data alone: they stay errors', () => {
    expect(retryableReason(new TypeError('undefined is not a function'))).toBeNull()
    expect(retryableReason(sequelizeError('SequelizeDatabaseError', { errno: 1064, sqlState: '42000' }))).toBeNull()
    expect(retryableReason(sequelizeError('SequelizeUniqueConstraintError', { errno: 1062, sqlState: '23000' }))).toBeNull()
    expect(retryableReason(null)).toBeNull()
    // A page refused to a role: Nuxt's error is `fatal`, but it is no database trouble.
    expect(retryableReason({ statusCode: 403, fatal: true, message: 'Your role does not open this page.' })).toBeNull()
  })
})
