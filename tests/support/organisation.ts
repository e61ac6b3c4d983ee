import { DEFAULT_ORGANISATION_SETTINGS, Organisation, User } from '../../server/db/models'
import { uniqueEmail } from './outbox'
import { type Client, DEMO, demoUser, freshClient } from './server'

export interface TestOrganisation {
  id: number
  admin: Client
  coordinator: Client
  enumerator: Client
  enumeratorId: number
}

/**
 * An invented organisation of its own with one admin, one coordinator and one enumerator, signed in, for tests that
 * change an organisation's settings or erase and purge data (so the demo organisation other files use is untouched).
 */
export async function makeOrganisation(name: string): Promise<TestOrganisation> {
  const suffix = Math.random().toString(36).slice(2, 8)
  const organisation = await Organisation.create({ name, slug: `${name.toLowerCase().replace(/[^a-z]+/g, '-')}-${suffix}`, settings: DEFAULT_ORGANISATION_SETTINGS })
  // The demo password's hash, copied, so these people can sign in without the test hashing anything.
  const { passwordHash } = (await User.findOne({ where: { email: demoUser('admin').email } }))!
  const person = async (role: 'admin' | 'coordinator' | 'enumerator', personName: string) => {
    const user = await User.create({ organisationId: organisation.id, email: uniqueEmail(`${suffix}-${role}`), name: personName, role, passwordHash, lastSignInAt: null })
    const client = freshClient()
    await client.signIn(user.email, DEMO.password)
    return { user, client }
  }
  const admin = await person('admin', 'Imelda Torvasco')
  const coordinator = await person('coordinator', 'Bartholomew Kanyesi')
  const enumerator = await person('enumerator', 'Wanjiru Osterhout')
  return { id: organisation.id, admin: admin.client, coordinator: coordinator.client, enumerator: enumerator.client, enumeratorId: enumerator.user.id }
}
