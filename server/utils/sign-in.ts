import type { H3Event } from 'h3'
import type { SignInInput } from '#shared/utils/schemas/auth'

// Compared against when the e-mail is unknown, so both paths cost one scrypt verification.
let decoyHash: string | undefined

export async function signIn(event: H3Event, input: SignInInput) {
  const ip = clientIp(event)
  const limit = await signInLimit(input.email, ip)
  if (limit.blocked) {
    await audit(event, null, { action: 'signin.blocked', details: { email: input.email } })
    setResponseHeader(event, 'Retry-After', limit.retryAfterMinutes * 60)
    throw createError({
      statusCode: 429,
      message: `Too many failed sign-ins. Try again in ${limit.retryAfterMinutes} minute${limit.retryAfterMinutes === 1 ? '' : 's'}.`
    })
  }

  // Only one account per address holds a password (see migration 0060); invited-only rows cannot sign in.
  const user = await accountForSignIn(input.email)
  decoyHash ??= await hashPassword('decoy password that matches nothing')
  const passwordOk = await verifyPassword(user?.passwordHash ?? decoyHash, input.password)
  if (!user || !user.passwordHash || !passwordOk) {
    await recordFailedSignIn(input.email, ip)
    await audit(event, null, {
      action: 'signin.failed',
      entityType: 'user',
      entityId: user?.id,
      organisationId: user?.organisationId,
      details: { email: input.email }
    })
    throw createError({ statusCode: 401, message: 'That e-mail and password do not match an account.' })
  }
  const actor = { id: user.id, email: user.email, organisationId: user.organisationId }
  if (!user.active) {
    await audit(event, actor, { action: 'signin.refused', entityType: 'user', entityId: user.id, details: { reason: 'deactivated' } })
    throw createError({ statusCode: 403, message: 'This account has been deactivated. Ask your administrator.' })
  }

  await user.update({ lastSignInAt: new Date() })
  await startSession(event, user)
  await audit(event, actor, { action: 'signin', entityType: 'user', entityId: user.id })
  return sessionUserOf(user)
}
