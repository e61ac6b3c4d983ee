import type { H3Event } from 'h3'
import { UniqueConstraintError } from 'sequelize'
import type { ForgotInput, SetPasswordInput, TokenCheckInput } from '#shared/utils/schemas/team'
import type { TokenCheckAnswer } from '#shared/types/team'
import type { TokenPurpose } from '../db/models'
import { database } from '../db/connection'
import type { TokenCheck, TokenProblem } from './tokens'

// The public routes behind the links in invitation and reset messages, and the "forgot password" form.

async function refuseBlockedAddress(event: H3Event) {
  await refuseOverLimit(event, 'link', clientIp(event), serverConfig().LINK_MAX_FAILURES_PER_IP, 'Too many links were refused from this address.')
}

async function refuseLink(event: H3Event, purpose: TokenPurpose, problem: TokenProblem): Promise<never> {
  await recordEvent('link', clientIp(event))
  await audit(event, null, { action: `${purpose}.link_refused`, details: { reason: problem } })
  const message = TOKEN_MESSAGES[purpose][problem]
  throw createError({ statusCode: TOKEN_STATUS[problem], message, data: { message, reason: problem } })
}

/** Whether a link still works, and for whom: the page shows the address before asking for a password. */
export async function checkLink(event: H3Event, input: TokenCheckInput): Promise<TokenCheckAnswer> {
  await refuseBlockedAddress(event)
  const check = await checkToken(input.token, input.purpose)
  if (!check.ok) return refuseLink(event, input.purpose, check.problem)
  return { purpose: input.purpose, email: check.user.email, name: check.user.name, organisationName: check.user.organisation.name }
}

/** Uses a link once: sets the password (and, on an invitation, the name the person prefers). */
export async function setPasswordWithLink(event: H3Event, input: SetPasswordInput) {
  await refuseBlockedAddress(event)
  const outcome = await database().transaction(async (transaction): Promise<TokenCheck> => {
    const check = await checkToken(input.token, input.purpose, transaction)
    if (!check.ok) return check
    const problem = passwordProblem(input.password, check.user.email)
    if (problem) throw fieldError('password', problem)
    const user = check.user
    await check.token.update({ usedAt: new Date() }, { transaction })
    if (input.purpose === 'invitation' && input.name) await user.update({ name: input.name }, { transaction })
    await storeNewPassword(user, input.password, transaction)
    await audit(event, { id: user.id, email: user.email, organisationId: user.organisationId }, {
      action: input.purpose === 'invitation' ? 'invitation.accepted' : 'password.reset',
      entityType: 'user',
      entityId: user.id
    }, transaction)
    return check
  }).catch((error: unknown): TokenCheck => {
    // Another organisation's invitation to the same address was accepted at the same moment: one address holds
    // one password (the unique index of migration 0060), so this one is refused as on a later visit of the link.
    if (error instanceof UniqueConstraintError) return { ok: false, problem: 'address_in_use' }
    throw error
  })
  if (!outcome.ok) return refuseLink(event, input.purpose, outcome.problem)
  return { email: outcome.user.email }
}

export const FORGOT_ANSWER = 'If an account uses this address, a message with a link to choose a new password is on its way.'

/**
 * Sends a reset link if the address belongs to an active account with a password. The answer is the
 * same whether or not it does, so the form tells nobody which addresses have accounts.
 */
export async function requestPasswordReset(event: H3Event, input: ForgotInput) {
  const config = serverConfig()
  const ip = clientIp(event)
  await refuseOverLimit(event, 'reset-ip', ip, config.RESET_MAX_PER_IP, 'Too many reset requests from this address.')
  await recordEvent('reset-ip', ip)
  // Beyond a few requests per address and window, nothing more is sent: a mailbox is not to be flooded.
  const flooded = await recentEvents('reset-email', input.email) >= config.RESET_MAX_PER_EMAIL
  await recordEvent('reset-email', input.email)
  const user = await accountForSignIn(input.email)
  if (user && user.active && user.passwordHash && !flooded) {
    await database().transaction(async (transaction) => {
      const { token } = await issueToken({ userId: user.id, purpose: 'reset', validMs: config.RESET_MINUTES * 60_000, createdByUserId: null }, transaction)
      const content = passwordResetMail({ name: user.name, link: linkTo('/reset', token), validMinutes: config.RESET_MINUTES })
      await queueMail({
        to: user.email,
        ...content,
        kind: 'reset',
        organisationId: user.organisationId,
        userId: user.id,
        sensitive: true,
        supersedes: true
      }, transaction)
      await audit(event, null, { action: 'password.reset_requested', entityType: 'user', entityId: user.id, organisationId: user.organisationId }, transaction)
    })
  }
  return { message: FORGOT_ANSWER }
}
