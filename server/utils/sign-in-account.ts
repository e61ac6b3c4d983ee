import { Op } from 'sequelize'
import { Organisation, User } from '../db/models'
import type { SignedInUser } from './access'

/**
 * The account that signs in with this address, with its organisation: the one row holding a password for it
 * (migration 0060 keeps it unique). Invited-only rows of other organisations never answer here, so sign-in and
 * password reset always reach the same account.
 */
export async function accountForSignIn(email: string): Promise<SignedInUser | null> {
  return await User.findOne({
    where: { email, passwordHash: { [Op.ne]: null } },
    include: [{ model: Organisation, as: 'organisation' }]
  }) as SignedInUser | null
}
