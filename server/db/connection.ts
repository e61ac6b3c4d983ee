import * as mariadb from 'mariadb'
import { Sequelize } from 'sequelize'
import { serverConfig } from '../utils/config'
import { initModels } from './models'

let sequelize: Sequelize | undefined

export interface DatabaseOptions {
  /** Register the app's models on this instance (false for the migration runner's own pool). */
  models?: boolean
  /**
   * Bound every wait, so a database that is down or frozen turns into a quick 503 instead of a hung request.
   * Off for migrations: an ALTER TABLE on a large table may legitimately run for minutes without a byte.
   */
  timeouts?: boolean
}

/** Builds a Sequelize instance with every model registered; used by the server and by the test helpers. */
export function createDatabase(url: string, poolMax = 10, { models = true, timeouts = true }: DatabaseOptions = {}): Sequelize {
  const config = serverConfig()
  const session = [
    // Row locks and metadata locks: a blocked statement gives up (retryable) instead of waiting 50 s or a year.
    `SET SESSION innodb_lock_wait_timeout = ${config.DATABASE_LOCK_WAIT_SECONDS}`,
    `SET SESSION lock_wait_timeout = ${config.DATABASE_LOCK_WAIT_SECONDS}`,
    // Galera: reads wait until this node has applied every write committed in the cluster before them.
    ...(config.DATABASE_WSREP_SYNC_WAIT === undefined ? [] : [`SET SESSION wsrep_sync_wait = ${config.DATABASE_WSREP_SYNC_WAIT}`])
  ]
  const instance = new Sequelize(url, {
    dialect: 'mariadb',
    // The bundled server cannot resolve dialect modules by name at run time, so the driver is passed in.
    dialectModule: mariadb,
    logging: false,
    pool: timeouts
      // idle below the socket timeout: a connection is returned to MariaDB before the timeout would cut it.
      ? { max: poolMax, min: 0, idle: Math.max(500, config.DATABASE_SOCKET_TIMEOUT_MS - 1000), acquire: config.DATABASE_ACQUIRE_TIMEOUT_MS, evict: 500 }
      : { max: poolMax, min: 0, idle: 10_000 },
    // utf8mb4 on every connection, whatever the server's default: text is never narrowed to 3-byte UTF-8 or "?".
    dialectOptions: timeouts
      ? { connectTimeout: config.DATABASE_CONNECT_TIMEOUT_MS, socketTimeout: config.DATABASE_SOCKET_TIMEOUT_MS, initSql: session, collation: 'UTF8MB4_UNICODE_CI' }
      : { connectTimeout: 5_000, collation: 'UTF8MB4_UNICODE_CI' },
    define: { underscored: true }
  })
  if (models) initModels(instance)
  return instance
}

/** The one connection pool of this server process. */
export function database(): Sequelize {
  const config = serverConfig()
  sequelize ??= createDatabase(config.DATABASE_URL, config.DATABASE_POOL_MAX)
  return sequelize
}

export async function closeDatabase(): Promise<void> {
  if (!sequelize) return
  const current = sequelize
  sequelize = undefined
  await current.close()
}
