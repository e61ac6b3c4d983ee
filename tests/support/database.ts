import type { Sequelize } from 'sequelize'
import { createDatabase } from '../../server/db/connection'

let instance: Sequelize | undefined

/** The same MariaDB database the test server uses, through the app's own models. */
export function testDatabase(): Sequelize {
  const url = process.env.DATABASE_URL
  if (!url || !url.includes('furrowcast_test')) {
    throw new Error('DATABASE_URL must point at the furrowcast_test database: run these tests through `npm test`.')
  }
  instance ??= createDatabase(url, 3)
  return instance
}

export async function closeTestDatabase() {
  await instance?.close()
  instance = undefined
}
