import { createHash, randomBytes, timingSafeEqual } from 'node:crypto'
import { Op, type Transaction } from 'sequelize'
import { Organisation, User, UserToken, type TokenPurpose } from '../db/models'

// A link token is "<row id>.<secret>": the id finds the row, the secret's SHA-256 is compared in constant time.
const TOKEN_SHAPE = /^(\d{1,10})\.([A-Za-z0-9_-]{43})$/

export type TokenProblem = 'invalid' | 'expired' | 'used' | 'replaced' | 'inactive' | 'address_in_use'

export type TokenCheck
  = | { ok: true, token: UserToken, user: User & { organisation: Organisation } }
    | { ok: false, problem: TokenProblem }

const sha256 = (value: string) => createHash('sha256').update(value).digest()

/** Creates a link for the user and revokes their earlier unused links of the same purpose. Returns the token. */
export async function issueToken(input: {
  userId: number
  purpose: TokenPurpose
  validMs: number
  createdByUserId: number | null
}, transaction: Transaction): Promise<{ token: string, expiresAt: Date }> {
  const now = new Date()
  await UserToken.update({ revokedAt: now }, {
    where: { userId: input.userId, purpose: input.purpose, usedAt: null, revokedAt: null },
    transaction
  })
  const secret = randomBytes(32).toString('base64url')
  const expiresAt = new Date(now.getTime() + input.validMs)
  const row = await UserToken.create({
    userId: input.userId,
    purpose: input.purpose,
    tokenHash: sha256(secret).toString('hex'),
    expiresAt,
    usedAt: null,
    revokedAt: null,
    createdByUserId: input.createdByUserId
  }, { transaction })
  return { token: `${row.id}.${secret}`, expiresAt }
}

/**
 * Checks a link without using it up. Inside a transaction, pass `lock` to hold the row until the
 * password is set, so two tabs cannot both use one link.
 */
export async function checkToken(raw: string, purpose: TokenPurpose, transaction?: Transaction): Promise<TokenCheck> {
  const match = TOKEN_SHAPE.exec(raw)
  if (!match) return { ok: false, problem: 'invalid' }
  const token = await UserToken.findByPk(Number(match[1]), { transaction, lock: transaction ? transaction.LOCK.UPDATE : undefined })
  const given = sha256(match[2]!)
  const stored = token ? Buffer.from(token.tokenHash, 'hex') : Buffer.alloc(32)
  const same = stored.length === given.length && timingSafeEqual(stored, given)
  if (!token || !same || token.purpose !== purpose) return { ok: false, problem: 'invalid' }
  if (token.usedAt) return { ok: false, problem: 'used' }
  if (token.revokedAt) return { ok: false, problem: 'replaced' }
  if (token.expiresAt.getTime() <= Date.now()) return { ok: false, problem: 'expired' }
  const user = await User.findByPk(token.userId, { include: [{ model: Organisation, as: 'organisation' }], transaction }) as (User & { organisation: Organisation }) | null
  if (!user) return { ok: false, problem: 'invalid' }
  if (!user.active) return { ok: false, problem: 'inactive' }
  // Addresses are unique per organisation, so another organisation may have invited the same address and its
  // owner accepted there first. Only the address's owner opens this link, so saying so leaks nothing.
  if (purpose === 'invitation' && await User.count({ where: { email: user.email, id: { [Op.ne]: user.id }, passwordHash: { [Op.ne]: null } }, transaction })) {
    return { ok: false, problem: 'address_in_use' }
  }
  return { ok: true, token, user }
}

export const TOKEN_MESSAGES: Record<TokenPurpose, Record<TokenProblem, string>> = {
  invitation: {
    invalid: 'This invitation link is not valid. Check that you opened the whole link from the message, or ask your administrator for a new invitation.',
    expired: 'This invitation link has expired. Ask your administrator to invite you again.',
    used: 'This invitation link has already been used. Sign in with the password you chose.',
    replaced: 'A newer invitation was sent to you. Use the link in the latest message.',
    inactive: 'This account has been deactivated. Ask your administrator.',
    address_in_use: 'This address already signs in to Furrowcast for another organisation, and one address can hold one account. Ask the administrator who invited you to invite another address of yours.'
  },
  reset: {
    invalid: 'This reset link is not valid. Check that you opened the whole link from the message, or ask for a new one.',
    expired: 'This reset link has expired. Ask for a new one.',
    used: 'This reset link has already been used. Sign in, or ask for a new link.',
    replaced: 'A newer reset link was sent to you. Use the link in the latest message.',
    inactive: 'This account has been deactivated. Ask your administrator.',
    address_in_use: 'This reset link is not valid. Ask for a new one.'
  }
}

/** 400 for a link that was never ours or was altered, 410 for one that was ours but is no longer usable. */
export const TOKEN_STATUS: Record<TokenProblem, number> = { invalid: 400, expired: 410, used: 410, replaced: 410, inactive: 403, address_in_use: 409 }
