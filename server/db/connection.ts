import * as mariadb from 'mariadb'
import { Sequelize } from 'sequelize'
import { serverConfig } from '../utils/config'
import { initModels } from './models'

let sequelize: Sequelize | undefined

/** Builds a Sequelize instance with every model registered; used by the server and by the test helpers. */
export function createDatabase(url: string, poolMax = 10): Sequelize {
  const instance = new Sequelize(url, {
    dialect: 'mariadb',
    // The bundled server cannot resolve dialect modules by name at run time, so the driver is passed in.
    dialectModule: mariadb,
    logging: false,
    pool: { max: poolMax, min: 0, idle: 10_000 },
    // utf8mb4 on every connection, whatever the server's default: text is never narrowed to 3-byte UTF-8 or "?".
    dialectOptions: { connectTimeout: 5_000, collation: 'UTF8MB4_UNICODE_CI' },
    define: { underscored: true }
  })
  initModels(instance)
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
