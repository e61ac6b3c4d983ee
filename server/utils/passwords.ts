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
 * Sets a new password. Raising the session version ends every session signed in before, and any open
 * invitation or reset link of the user is revoked.
 */
export async function storeNewPassword(user: User, password: string, transaction: Transaction) {
  const now = new Date()
  await user.update({
    passwordHash: await hashPassword(password),
    sessionVersion: user.sessionVersion + 1,
    passwordChangedAt: now
  }, { transaction })
  await UserToken.update({ revokedAt: now }, { where: { userId: user.id, usedAt: null, revokedAt: null }, transaction })
}

/** A signed-in user changes their own password: their other sessions end, this one goes on. */
export async function changeOwnPassword(event: H3Event, user: SignedInUser, input: ChangePasswordInput) {
  if (!user.passwordHash || !(await verifyPassword(user.passwordHash, input.currentPassword))) {
    await audit(event, user, { action: 'password.change_refused', entityType: 'user', entityId: user.id })
    throw fieldError('currentPassword', 'That is not your current password.')
  }
  const problem = passwordProblem(input.newPassword, user.email)
  if (problem) throw fieldError('newPassword', problem)
  await database().transaction(async (transaction) => {
    await storeNewPassword(user, input.newPassword, transaction)
    await audit(event, user, { action: 'password.changed', entityType: 'user', entityId: user.id }, transaction)
  })
  await startSession(event, user)
  return { changed: true }
}
