import type { Sequelize } from 'sequelize'
import type { Role } from '../../shared/utils/roles'
import demo from './demo-people.json'
import { DEFAULT_ORGANISATION_SETTINGS, Organisation, User } from './models'

// The demo scenario is invented from end to end: organisation, district and people do not exist.
// The same file feeds `npm start`, which prints these sign-ins.
export const DEMO_ORGANISATION = demo.organisation
export const DEMO_PASSWORD = demo.password
export const DEMO_USERS = demo.users as ReadonlyArray<{ email: string, name: string, role: Role }>

/**
 * Seeds the demo organisation and one user per role, only when no organisation exists yet,
 * inside one transaction so a failed seed leaves nothing half-written. Returns true if it seeded.
 */
export async function seedDemo(sequelize: Sequelize, hash: (password: string) => Promise<string>): Promise<boolean> {
  if (await Organisation.count() > 0) return false
  const passwordHash = await hash(DEMO_PASSWORD)
  await sequelize.transaction(async (transaction) => {
    const organisation = await Organisation.create({
      name: DEMO_ORGANISATION.name,
      slug: DEMO_ORGANISATION.slug,
      settings: { ...DEFAULT_ORGANISATION_SETTINGS, funderOrganisations: [demo.funderOrganisation] }
    }, { transaction })
    await User.bulkCreate(DEMO_USERS.map(user => ({
      ...user,
      organisationId: organisation.id,
      passwordHash,
      lastSignInAt: null
    })), { transaction })
  })
  return true
}
