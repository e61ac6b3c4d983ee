import { QueryTypes } from 'sequelize'
import { database } from '../db/connection'

interface Health { ok: boolean, database: 'up' | 'down' | 'preparing', cluster?: string, message?: string }

/**
 * For load balancers and people: 200 when this server can serve requests, else 503 naming the part that is down.
 * On a Galera node that is not Synced (joining, donor, cut off from the majority) this server answers 503 too.
 */
export default definePublicHandler(async (event): Promise<Health> => {
  const refuse = (health: Omit<Health, 'ok'>): Health => {
    setResponseStatus(event, 503)
    setResponseHeader(event, 'Retry-After', retryAfterSeconds())
    return { ok: false, ...health }
  }
  try {
    await databaseReady()
  }
  catch {
    return refuse({ database: 'preparing', message: 'The database cannot be reached or prepared yet.' })
  }
  try {
    const [row] = await database().query<{ state: string | null }>(
      'SELECT (SELECT VARIABLE_VALUE FROM information_schema.GLOBAL_STATUS WHERE VARIABLE_NAME = \'WSREP_LOCAL_STATE_COMMENT\') AS state',
      { type: QueryTypes.SELECT })
    const state = row?.state ?? null
    // Without Galera the status variable is absent or reads "Disconnected" with wsrep off.
    const galera = state !== null && state !== '' && state !== 'Disconnected'
    if (galera && state !== 'Synced') return refuse({ database: 'up', cluster: state, message: `This database node is ${state}, not in sync with the cluster.` })
    return { ok: true, database: 'up', ...(galera ? { cluster: state } : {}) }
  }
  catch (error) {
    if (!retryableReason(error)) throw error
    return refuse({ database: 'down', message: 'The database is not reachable just now.' })
  }
})
