import { randomBytes } from 'node:crypto'
import { hostname } from 'node:os'
import { QueryTypes, type QueryInterface, type Sequelize } from 'sequelize'
import { SequelizeStorage, Umzug } from 'umzug'
import { retryableReason } from '../utils/retryable'
import { MIGRATIONS } from './migrations'

const LEASE_NAME = 'migrations'
const LEASE_SECONDS = 60
const WAIT_MS = 5 * 60_000

export function migrator(sequelize: Sequelize) {
  return new Umzug<QueryInterface>({
    migrations: MIGRATIONS.map(m => ({ name: m.name, up: m.up, down: m.down })),
    context: sequelize.getQueryInterface(),
    storage: new SequelizeStorage({ sequelize, tableName: 'schema_migrations' }),
    logger: undefined
  })
}

/**
 * A lease row instead of a named lock: GET_LOCK is private to one MariaDB server, so on a Galera cluster two app
 * servers talking to two nodes would both get it. A row is replicated, and two nodes taking it at once collide at
 * certification (one gets a deadlock error and tries again). The lease expires, so a server killed while
 * migrating does not block the others for ever; the holder renews it while it works.
 */
async function takeLease(sequelize: Sequelize, holder: string): Promise<() => Promise<void>> {
  await sequelize.query(`CREATE TABLE IF NOT EXISTS furrowcast_leases (
    name VARCHAR(64) NOT NULL PRIMARY KEY, holder VARCHAR(128) NOT NULL, expires_at DATETIME(3) NOT NULL
  ) ENGINE=InnoDB`)
  const claim = async () => {
    // Assignments run left to right: the holder changes only if the lease has expired, and the expiry moves
    // only for the (new or continuing) holder.
    await sequelize.query(`INSERT INTO furrowcast_leases (name, holder, expires_at) VALUES (?, ?, NOW(3) + INTERVAL ${LEASE_SECONDS} SECOND)
      ON DUPLICATE KEY UPDATE holder = IF(expires_at < NOW(3), VALUES(holder), holder),
        expires_at = IF(holder = VALUES(holder), VALUES(expires_at), expires_at)`, { replacements: [LEASE_NAME, holder] })
    const [row] = await sequelize.query<{ holder: string }>('SELECT holder FROM furrowcast_leases WHERE name = ?', { replacements: [LEASE_NAME], type: QueryTypes.SELECT })
    return row?.holder === holder
  }
  const started = Date.now()
  for (;;) {
    const mine = await claim().catch((error: unknown) => {
      if (retryableReason(error)) return false
      throw error
    })
    if (mine) break
    if (Date.now() - started > WAIT_MS) throw new Error('Could not take the migration lease within 5 minutes')
    await new Promise(resolve => setTimeout(resolve, 250 + Math.random() * 500))
  }
  const renewal = setInterval(() => void claim().catch(() => {}), (LEASE_SECONDS / 4) * 1000)
  return async () => {
    clearInterval(renewal)
    await sequelize.query('DELETE FROM furrowcast_leases WHERE name = ? AND holder = ?', { replacements: [LEASE_NAME, holder] })
  }
}

/**
 * Runs pending migrations, then `afterwards` (the demo seed), under the migration lease, so that several app
 * servers starting at once (on one database or on the nodes of a cluster) never apply a migration or the seed
 * twice. Returns the names applied.
 */
export async function migrateUp(sequelize: Sequelize, afterwards?: () => Promise<void>): Promise<string[]> {
  const release = await takeLease(sequelize, `${hostname()}:${process.pid}:${randomBytes(6).toString('hex')}`)
  try {
    const applied = await migrator(sequelize).up()
    await afterwards?.()
    return applied.map(m => m.name)
  }
  finally {
    await release()
  }
}
