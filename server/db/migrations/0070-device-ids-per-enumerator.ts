import type { QueryInterface } from 'sequelize'

/**
 * The ids a tablet gives its visits and photos are read within the enumerator's own space (visits) or the visit's
 * own space (photos), never against other people's rows: an id someone else's row already holds is stored under a
 * server id of its own, and the device keeps its id in `device_id`. So an organisation cannot learn whether
 * another's visit or photo id exists — the answer is the same as for a new id. `device_key` is the id the device
 * uses (its own id when the row keeps it, which is nearly always), unique within the space and indexed for sync.
 * (VARCHAR and RTRIM because MariaDB refuses a stored expression over a CHAR column, whose padding depends on the
 * session's sql_mode.)
 */
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.sequelize.query(`ALTER TABLE visits
    ADD COLUMN device_id VARCHAR(36) NULL,
    ADD COLUMN device_key VARCHAR(36) AS (COALESCE(device_id, RTRIM(id))) PERSISTENT,
    ADD UNIQUE INDEX visits_enumerator_device_key (enumerator_id, device_key)`)
  await qi.sequelize.query(`ALTER TABLE photos
    ADD COLUMN device_id VARCHAR(36) NULL,
    ADD COLUMN device_key VARCHAR(36) AS (COALESCE(device_id, RTRIM(id))) PERSISTENT,
    ADD UNIQUE INDEX photos_visit_device_key (visit_id, device_key)`)
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.sequelize.query('ALTER TABLE photos DROP INDEX photos_visit_device_key, DROP COLUMN device_key, DROP COLUMN device_id')
  await qi.sequelize.query('ALTER TABLE visits DROP INDEX visits_enumerator_device_key, DROP COLUMN device_key, DROP COLUMN device_id')
}
