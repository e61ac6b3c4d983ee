import { closeDatabase } from '../db/connection'

export default defineNitroPlugin((nitroApp) => {
  // Start migrating at boot; requests wait on the same promise (see server/middleware/01.database.ts).
  databaseReady().catch((error: unknown) => {
    console.error('[furrowcast] database preparation failed:', error)
  })
  // Close the pool when the server shuts down, so MariaDB sees clean disconnects.
  nitroApp.hooks.hook('close', closeDatabase)
})
