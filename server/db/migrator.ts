import { QueryTypes, type QueryInterface, type Sequelize } from 'sequelize'
import { SequelizeStorage, Umzug } from 'umzug'
import { MIGRATIONS } from './migrations'

const LOCK_NAME = 'furrowcast_migrations'

export function migrator(sequelize: Sequelize) {
  return new Umzug<QueryInterface>({
    migrations: MIGRATIONS.map(m => ({ name: m.name, up: m.up, down: m.down })),
    context: sequelize.getQueryInterface(),
    storage: new SequelizeStorage({ sequelize, tableName: 'schema_migrations' }),
    logger: undefined
  })
}

/**
 * Runs pending migrations, then `afterwards` (the demo seed), under a MariaDB named lock, so that several
 * app servers starting at once never apply a migration or the seed twice. The lock belongs to one
 * connection, so it is taken and released inside one transaction, which pins that connection.
 * Returns the names applied.
 */
export async function migrateUp(sequelize: Sequelize, afterwards?: () => Promise<void>): Promise<string[]> {
  const lockHolder = await sequelize.transaction()
  try {
    // Typed as SELECT: Sequelize's untyped raw-query path does not work with the current mariadb driver.
    const [lock] = await sequelize.query<{ got: number }>('SELECT GET_LOCK(?, 60) AS got', {
      replacements: [LOCK_NAME],
      transaction: lockHolder,
      type: QueryTypes.SELECT
    })
    if (Number(lock?.got) !== 1) throw new Error('Could not take the migration lock within 60 s')
    const applied = await migrator(sequelize).up()
    await afterwards?.()
    await sequelize.query('SELECT RELEASE_LOCK(?) AS released', { replacements: [LOCK_NAME], transaction: lockHolder, type: QueryTypes.SELECT })
    return applied.map(m => m.name)
  }
  finally {
    await lockHolder.commit()
  }
}
