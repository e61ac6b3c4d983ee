import type { H3Event } from 'h3'
import type { Transaction } from 'sequelize'
import type { ChangePasswordInput } from '#shared/utils/schemas/team'
import { type User, UserToken } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'

/** A 400 that the forms show under the field that caused it. */
export function fieldError(field: string, message: string) {
  return createError({ statusCode: 400, message, data: { message, fieldErrors: { [field]: message } } })
}

/**
 * Sets a new password. Every session of the user ends (but `keepSessionId`, the caller's own on a change
 * from the account page), and any open invitation or reset link of the user is revoked.
 */
export async function storeNewPassword(user: User, password: string, transaction: Transaction, keepSessionId?: number) {
  const now = new Date()
  await user.update({ passwordHash: await hashPassword(password), passwordChangedAt: now }, { transaction })
  await UserToken.update({ revokedAt: now }, { where: { userId: user.id, usedAt: null, revokedAt: null }, transaction })
  await revokeSessionsOf(user.id, keepSessionId ? 'password_changed' : 'password_reset', { except: keepSessionId, transaction })
}

/**
 * A signed-in user changes their own password: their other sessions end, this one goes on. Wrong current
 * passwords are counted per person like failed sign-ins, so a borrowed session cannot guess it.
 */
export async function changeOwnPassword(event: H3Event, user: SignedInUser, input: ChangePasswordInput) {
  const subject = `user:${user.id}`
  await refuseOverLimit(event, 'password-check', subject, serverConfig().SIGNIN_MAX_FAILURES_PER_EMAIL, 'Too many wrong current passwords.')
  if (!user.passwordHash || !(await verifyPassword(user.passwordHash, input.currentPassword))) {
    await recordEvent('password-check', subject)
    await audit(event, user, { action: 'password.change_refused', entityType: 'user', entityId: user.id })
    throw fieldError('currentPassword', 'That is not your current password.')
  }
  const problem = passwordProblem(input.newPassword, user.email)
  if (problem) throw fieldError('newPassword', problem)
  const current = await currentSession(event)
  await database().transaction(async (transaction) => {
    await storeNewPassword(user, input.newPassword, transaction, current?.record.id)
    await audit(event, user, { action: 'password.changed', entityType: 'user', entityId: user.id }, transaction)
  })
  return { changed: true }
}
