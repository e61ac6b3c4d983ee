import { createDatabase, database } from '../db/connection'
import { migrateUp } from '../db/migrator'
import { seedDemo } from '../db/seed'
import { seedDemoField } from '../db/demo/seed-field'

let ready: Promise<void> | undefined

/** Migrates (and seeds, when asked) once per process; every request waits for this before touching data. */
export function databaseReady(): Promise<void> {
  ready ??= (async () => {
    const sequelize = database()
    await sequelize.authenticate()
    // Migrations get a pool of their own without the request timeouts: an ALTER TABLE may run for minutes.
    const migrations = createDatabase(serverConfig().DATABASE_URL, 2, { models: false, timeouts: false })
    try {
      const applied = await migrateUp(migrations, async () => {
        if (serverConfig().FURROWCAST_SEED === 'demo' && await seedDemo(sequelize, hashPassword)) {
          console.info('[furrowcast] demo organisation seeded')
        }
        if (serverConfig().FURROWCAST_SEED === 'demo' && await seedDemoField(sequelize)) {
          console.info('[furrowcast] demo district, round and visits seeded')
        }
      })
      if (applied.length) console.info(`[furrowcast] migrations applied: ${applied.join(', ')}`)
    }
    finally {
      await migrations.close()
    }
  })()
  // A failed preparation (database still starting, say) is retried by the next request.
  ready.catch(() => {
    ready = undefined
  })
  return ready
}
