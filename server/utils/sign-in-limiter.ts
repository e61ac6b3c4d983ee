import { Op } from 'sequelize'
import { SignInAttempt } from '../db/models'

export interface LimitVerdict {
  blocked: boolean
  retryAfterMinutes: number
}

/**
 * Counts failed sign-ins in the sliding window, per e-mail and per IP. The IP limit is higher than the
 * e-mail limit because many enumerators of one programme often share one office connection.
 */
export async function signInLimit(email: string, ip: string): Promise<LimitVerdict> {
  const config = serverConfig()
  const since = new Date(Date.now() - config.SIGNIN_WINDOW_MINUTES * 60_000)
  const [byEmail, byIp] = await Promise.all([
    SignInAttempt.count({ where: { email, createdAt: { [Op.gte]: since } } }),
    SignInAttempt.count({ where: { ip, createdAt: { [Op.gte]: since } } })
  ])
  const blocked = byEmail >= config.SIGNIN_MAX_FAILURES_PER_EMAIL || byIp >= config.SIGNIN_MAX_FAILURES_PER_IP
  if (!blocked) return { blocked, retryAfterMinutes: 0 }
  const oldest = await SignInAttempt.min<Date, SignInAttempt>('createdAt', {
    where: {
      createdAt: { [Op.gte]: since },
      [Op.or]: [{ email }, { ip }]
    }
  })
  const freesAt = (oldest ? new Date(oldest).getTime() : Date.now()) + config.SIGNIN_WINDOW_MINUTES * 60_000
  return { blocked, retryAfterMinutes: Math.max(1, Math.ceil((freesAt - Date.now()) / 60_000)) }
}

export async function recordFailedSignIn(email: string, ip: string) {
  await SignInAttempt.create({ email, ip })
}
