import { QueryTypes } from 'sequelize'
import { afterAll, describe, expect, it } from 'vitest'
import { migrateUp } from '../../server/db/migrator'
import { Organisation, User } from '../../server/db/models'
import { seedDemo } from '../../server/db/seed'
import { closeTestDatabase, testDatabase } from '../support/database'
import { DEMO } from '../support/server'

afterAll(closeTestDatabase)

describe('migrations and the demo seed', () => {
  it('has applied every migration, and applying again does nothing', async () => {
    const sequelize = testDatabase()
    const rows = await sequelize.query<{ name: string }>('SELECT name FROM schema_migrations ORDER BY name', { type: QueryTypes.SELECT })
    expect(rows.map(r => r.name)).toContain('0001-foundation')
    expect(await migrateUp(sequelize)).toEqual([])
  })

  it('seeded one organisation with one user per role, and seeding again adds nothing', async () => {
    const sequelize = testDatabase()
    const before = { organisations: await Organisation.count(), users: await User.count() }
    // Other tests add organisations of their own; the demo one exists exactly once.
    expect(await Organisation.count({ where: { slug: DEMO.organisation.slug } })).toBe(1)
    const mustNotHash = async (): Promise<string> => {
      throw new Error('the seed must be skipped before any password is hashed')
    }
    expect(await seedDemo(sequelize, mustNotHash)).toBe(false)
    expect({ organisations: await Organisation.count(), users: await User.count() }).toEqual(before)
    const demo = await Organisation.findOne({ where: { slug: DEMO.organisation.slug } })
    const roles = (await User.findAll({ where: { email: DEMO.users.map(u => u.email), organisationId: demo!.id } })).map(u => u.role).sort()
    expect(roles).toEqual(['admin', 'coordinator', 'enumerator', 'funder'])
  })

  it('stores passwords as scrypt hashes, never as text', async () => {
    const user = await User.findOne({ where: { email: DEMO.users[0]!.email } })
    expect(user?.passwordHash).toMatch(/^\$scrypt\$/)
    expect(user?.passwordHash).not.toContain(DEMO.password)
  })

  it('refuses a second user with the same e-mail in the same organisation', async () => {
    const organisation = await Organisation.findOne({ where: { slug: DEMO.organisation.slug } })
    await expect(User.create({
      organisationId: organisation!.id,
      email: DEMO.users[0]!.email,
      name: 'Duplicate',
      role: 'funder',
      passwordHash: null,
      lastSignInAt: null
    })).rejects.toThrow(/Validation error|Duplicate/)
  })
})
