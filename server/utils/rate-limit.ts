import type { H3Event } from 'h3'
import { Op } from 'sequelize'
import { RateEvent } from '../db/models'

/** How many events of the bucket this subject (an address, an e-mail) had in the sign-in window. */
export async function recentEvents(bucket: string, subject: string): Promise<number> {
  const since = new Date(Date.now() - serverConfig().SIGNIN_WINDOW_MINUTES * 60_000)
  return RateEvent.count({ where: { bucket, subject, createdAt: { [Op.gte]: since } } })
}

export async function recordEvent(bucket: string, subject: string) {
  await RateEvent.create({ bucket, subject: subject.slice(0, 254) })
}

/** Answers 429 with Retry-After once the subject has reached `max` events of the bucket in the window. */
export async function refuseOverLimit(event: H3Event, bucket: string, subject: string, max: number, message: string) {
  if (await recentEvents(bucket, subject) < max) return
  const minutes = serverConfig().SIGNIN_WINDOW_MINUTES
  setResponseHeader(event, 'Retry-After', minutes * 60)
  throw createError({ statusCode: 429, message: `${message} Try again in ${minutes} minutes.` })
}

/** Drops events older than a day: every window is far shorter, so they can never count again. */
export async function pruneRateEvents() {
  await RateEvent.destroy({ where: { createdAt: { [Op.lt]: new Date(Date.now() - 86_400_000) } } })
}
