import type { H3Event } from 'h3'
import { UniqueConstraintError } from 'sequelize'
import { ROLE_LABELS } from '#shared/utils/roles'
import type { InviteInput } from '#shared/utils/schemas/team'
import type { InvitationAnswer } from '#shared/types/team'
import { User } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'

/** An absolute link into the app, for messages. */
export function linkTo(path: string, token: string): string {
  return `${serverConfig().PUBLIC_URL.replace(/\/$/, '')}${path}?token=${encodeURIComponent(token)}`
}

/**
 * Invites a new person, or invites again someone whose invitation is still open (the old link stops
 * working, and role and name are updated). The message is queued in the same transaction.
 */
export async function inviteUser(event: H3Event, admin: SignedInUser, input: InviteInput): Promise<InvitationAnswer> {
  const config = serverConfig()
  try {
    return await database().transaction(async (transaction) => {
      const now = new Date()
      // Only this organisation's people are looked at: whether the address is used by another organisation is
      // never told (the answer is the same as for a new address; its owner learns it on opening the link).
      let user = await User.findOne({ where: { email: input.email, organisationId: admin.organisationId }, transaction, lock: transaction.LOCK.UPDATE })
      if (user?.passwordHash) {
        throw createError({ statusCode: 409, message: 'This e-mail address already has a Furrowcast account.' })
      }
      if (user && !user.active) {
        throw createError({ statusCode: 409, message: 'This person has been deactivated. Reactivate them before inviting them again.' })
      }
      const reinvited = user !== null
      if (user) {
        await user.update({ role: input.role, name: input.name ?? user.name, invitedAt: now }, { transaction })
      }
      else {
        user = await User.create({
          organisationId: admin.organisationId,
          email: input.email,
          name: input.name ?? input.email.split('@')[0]!,
          role: input.role,
          passwordHash: null,
          lastSignInAt: null,
          invitedAt: now
        }, { transaction })
      }
      const { token, expiresAt } = await issueToken({
        userId: user.id,
        purpose: 'invitation',
        validMs: config.INVITATION_HOURS * 3_600_000,
        createdByUserId: admin.id
      }, transaction)
      const content = invitationMail({
        organisationName: admin.organisation.name,
        inviterName: admin.name,
        roleLabel: ROLE_LABELS[input.role],
        link: linkTo('/welcome', token),
        validHours: config.INVITATION_HOURS
      })
      await queueMail({
        to: user.email,
        ...content,
        kind: 'invitation',
        organisationId: admin.organisationId,
        userId: user.id,
        sensitive: true,
        supersedes: true
      }, transaction)
      await audit(event, admin, {
        action: reinvited ? 'user.reinvited' : 'user.invited',
        entityType: 'user',
        entityId: user.id,
        details: { email: user.email, role: input.role }
      }, transaction)
      return { userId: user.id, email: user.email, role: input.role, expiresAt: expiresAt.toISOString(), reinvited }
    })
  }
  catch (error) {
    // Two admins of one organisation inviting the same new address at once: the second meets the unique index.
    if (error instanceof UniqueConstraintError) {
      throw createError({ statusCode: 409, message: 'This e-mail address already has a Furrowcast account.' })
    }
    throw error
  }
}
