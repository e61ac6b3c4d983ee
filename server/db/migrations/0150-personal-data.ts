import { DataTypes, type QueryInterface } from 'sequelize'

// Farmers' personal data: erasure on request and retention after a round closes.
// - rounds.closed_at: when the round was last closed (retention counts from it; reopening clears it).
// - visits.names_purged_at: the retention purge replaced the farm code by its pseudonym and dropped free text.
// - erasures: one row per farm erased at a farmer's request; the farm is known only by a keyed hash of its code
//   (farm_key), so the table never holds the erased value but a tablet's later resend of it is still recognised.
// - erased_visits: the ids of visits whose personal data was erased, so that the tablets holding them are told
//   to drop their copies at their next sync, even when the server's row itself was deleted.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.addColumn('rounds', 'closed_at', { type: DataTypes.DATE(3), allowNull: true })
  await qi.sequelize.query('UPDATE rounds SET closed_at = updated_at WHERE status = \'closed\'')
  await qi.addColumn('visits', 'names_purged_at', { type: DataTypes.DATE(3), allowNull: true })
  await qi.createTable('erasures', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'organisations', key: 'id' } },
    farm_key: { type: DataTypes.CHAR(64), allowNull: false },
    opaque_id: { type: DataTypes.STRING(40), allowNull: false },
    visit_count: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    photo_count: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    kept_answers: { type: DataTypes.BOOLEAN, allowNull: false },
    created_by: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    created_at: { type: DataTypes.DATE(3), allowNull: false }
  })
  await qi.addIndex('erasures', ['organisation_id', 'farm_key'])
  await qi.createTable('erased_visits', {
    visit_id: { type: DataTypes.CHAR(36), primaryKey: true },
    erasure_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'erasures', key: 'id' } },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    enumerator_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    // The id the tablet knows the visit by (visits.device_key, migration 0070): tablets are told and matched by it.
    device_key: { type: DataTypes.STRING(36), allowNull: false },
    erased_at: { type: DataTypes.DATE(3), allowNull: false }
  })
  await qi.addIndex('erased_visits', ['enumerator_id', 'erased_at'])
  await qi.addIndex('erased_visits', ['enumerator_id', 'device_key'])
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.dropTable('erased_visits')
  await qi.dropTable('erasures')
  await qi.removeColumn('visits', 'names_purged_at')
  await qi.removeColumn('rounds', 'closed_at')
}
