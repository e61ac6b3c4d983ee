import { QueryTypes } from 'sequelize'
import { database } from '../db/connection'

// Retention reaches the tablets too: once the purge has replaced a visit's names (farm code, free text, review
// reason) on the server, the enumerator's tablet is told to drop its own copy at the next sync, through the same
// `erased` list an erasure on request uses. Its copy still holds the farm code, the answers and the photos.

/** Device ids of this enumerator's visits whose names were purged (since the tablet's last pull, when given). */
export async function purgedVisitIdsFor(actor: { id: number, organisationId: number }, since?: Date): Promise<string[]> {
  const rows = await database().query<{ visitId: string }>(
    `SELECT device_key AS visitId FROM visits WHERE enumerator_id = ? AND organisation_id = ? AND names_purged_at IS NOT NULL
      ${since ? 'AND names_purged_at >= ?' : ''} ORDER BY names_purged_at DESC LIMIT 5000`,
    { replacements: [actor.id, actor.organisationId, ...(since ? [since] : [])], type: QueryTypes.SELECT })
  return rows.map(r => r.visitId)
}
