import type { H3Event } from 'h3'
import { Op, type WhereOptions } from 'sequelize'
import type { PeopleQuery } from '#shared/utils/schemas/listing'
import type { PersonUpdateInput } from '#shared/utils/schemas/team'
import type { MailState, Page, PersonRow } from '#shared/types/listing'
import { MailMessage, User, UserToken } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'

export async function listPeople(organisationId: number, query: PeopleQuery): Promise<Page<PersonRow>> {
  const where: WhereOptions<User> = { organisationId }
  if (query.role) Object.assign(where, { role: query.role })
  if (query.status) Object.assign(where, { active: query.status === 'active' })
  if (query.search) {
    const like = `%${query.search.replace(/[%_\\]/g, c => `\\${c}`)}%`
    Object.assign(where, { [Op.or]: [{ name: { [Op.like]: like } }, { email: { [Op.like]: like } }] })
  }
  const { rows, count } = await User.findAndCountAll({
    where,
    order: [['name', 'ASC'], ['id', 'ASC']],
    limit: query.pageSize,
    offset: (query.page - 1) * query.pageSize
  })
  const ids = rows.map(user => user.id)
  const [tokens, messages] = ids.length
    ? await Promise.all([
        UserToken.findAll({ where: { userId: ids, purpose: 'invitation', usedAt: null, revokedAt: null }, order: [['id', 'DESC']] }),
        MailMessage.findAll({
          where: { userId: ids, organisationId },
          attributes: ['id', 'userId', 'kind', 'status', 'attempts', 'lastError', 'nextAttemptAt', 'sentAt'],
          order: [['id', 'DESC']]
        })
      ])
    : [[], []]
  const sessions = await activeSessionCounts(ids)
  const latest = <T extends { userId: number | null }>(list: T[], userId: number) => list.find(item => item.userId === userId)
  return {
    items: rows.map((user) => {
      const token = latest(tokens, user.id)
      const message = latest(messages, user.id)
      return {
        id: user.id,
        name: user.name,
        email: user.email,
        role: user.role,
        active: user.active,
        lastSignInAt: user.lastSignInAt?.toISOString() ?? null,
        hasPassword: user.passwordHash !== null,
        invitation: token ? { expiresAt: token.expiresAt.toISOString(), expired: token.expiresAt.getTime() <= Date.now() } : null,
        mail: message ? mailStateOf(message) : null,
        openSessions: sessions.get(user.id) ?? 0
      }
    }),
    total: count,
    page: query.page,
    pageSize: query.pageSize
  }
}

function mailStateOf(message: MailMessage): MailState {
  return {
    id: message.id,
    kind: message.kind,
    status: message.status,
    attempts: message.attempts,
    lastError: message.lastError,
    nextAttemptAt: message.nextAttemptAt?.toISOString() ?? null,
    sentAt: message.sentAt?.toISOString() ?? null
  }
}

/**
 * Changes a person's role or active flag. The last active administrator of an organisation can be neither
 * demoted nor deactivated, by anyone: the organisation would be left with nobody to manage it.
 */
export async function updatePerson(event: H3Event, admin: SignedInUser, personId: number, input: PersonUpdateInput) {
  return database().transaction(async (transaction) => {
    const person = await User.findOne({ where: { id: personId, organisationId: admin.organisationId }, transaction, lock: transaction.LOCK.UPDATE })
    if (!person) throw createError({ statusCode: 404, message: 'There is no such person in your organisation.' })
    const newRole = input.role ?? person.role
    const newActive = input.active ?? person.active
    const losesAdmin = person.role === 'admin' && person.active && (newRole !== 'admin' || !newActive)
    if (losesAdmin) {
      // Lock every active admin row, so two admins demoting each other at once cannot both succeed.
      const admins = await User.findAll({
        where: { organisationId: admin.organisationId, role: 'admin', active: true },
        transaction,
        lock: transaction.LOCK.UPDATE
      })
      if (!admins.some(other => other.id !== person.id)) {
        throw createError({
          statusCode: 409,
          message: person.id === admin.id
            ? 'You are the last active administrator. Make someone else an administrator first.'
            : `${person.name} is the last active administrator. Make someone else an administrator first.`
        })
      }
    }
    const entity = { entityType: 'user', entityId: person.id }
    if (newRole !== person.role) {
      await audit(event, admin, { action: 'user.role_changed', ...entity, details: { email: person.email, from: person.role, to: newRole } }, transaction)
    }
    if (newActive !== person.active) {
      await audit(event, admin, { action: newActive ? 'user.reactivated' : 'user.deactivated', ...entity, details: { email: person.email } }, transaction)
    }
    // Deactivation ends every session for good: reactivating the person later revives none of them.
    if (!newActive) await revokeSessionsOf(person.id, 'deactivated', { transaction })
    await person.update({ role: newRole, active: newActive }, { transaction })
    return { id: person.id, role: person.role, active: person.active }
  })
}

/** An admin ends every session of a person of their organisation (a lost tablet, a shared computer). */
export async function endSessionsOf(event: H3Event, admin: SignedInUser, personId: number) {
  const person = await User.findOne({ where: { id: personId, organisationId: admin.organisationId }, attributes: ['id', 'email'] })
  if (!person) throw createError({ statusCode: 404, message: 'There is no such person in your organisation.' })
  return database().transaction(async (transaction) => {
    const ended = await revokeSessionsOf(person.id, 'ended_by_admin', { transaction })
    await audit(event, admin, { action: 'user.sessions_ended', entityType: 'user', entityId: person.id, details: { email: person.email, ended } }, transaction)
    return { ended }
  })
}
