import { DataTypes, type QueryInterface } from 'sequelize'

// The farm register: one row per farm of an organisation, so that the same farm can be followed across rounds.
// - farms: a stable id, the farm code (unique in the organisation, any case) and its home village (the village of
//   its first visit).
// - visits.farm_id: the registered farm a visit belongs to. NULL while the visit's village differs from the farm's
//   home village: such a visit is flagged (flags.farmInOtherVillage) and waits for a reviewer to correct the code.
// Existing visits are registered and linked here, the earliest visit of each code deciding the home village.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.createTable('farms', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'organisations', key: 'id' } },
    code: { type: DataTypes.STRING(40), allowNull: false },
    village_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'villages', key: 'id' } },
    created_at: { type: DataTypes.DATE(3), allowNull: false },
    updated_at: { type: DataTypes.DATE(3), allowNull: false }
  })
  await qi.addIndex('farms', ['organisation_id', 'code'], { unique: true, name: 'farms_organisation_code' })
  // No foreign key: removing a column with one trips Sequelize's key lookup on the mariadb driver (see 0010).
  await qi.addColumn('visits', 'farm_id', { type: DataTypes.INTEGER.UNSIGNED, allowNull: true })
  await qi.addIndex('visits', ['farm_id', 'round_id'], { name: 'visits_farm_round' })
  await qi.sequelize.query(`INSERT INTO farms (organisation_id, code, village_id, created_at, updated_at)
    SELECT organisation_id, farm_code, village_id, NOW(3), NOW(3) FROM (
      SELECT organisation_id, farm_code, village_id,
        ROW_NUMBER() OVER (PARTITION BY organisation_id, farm_code ORDER BY saved_at, id) AS n FROM visits) first_visits
    WHERE n = 1
    ON DUPLICATE KEY UPDATE farms.id = farms.id`)
  await qi.sequelize.query(`UPDATE visits v JOIN farms f ON f.organisation_id = v.organisation_id AND f.code = v.farm_code
    SET v.farm_id = f.id WHERE f.village_id = v.village_id`)
  await qi.sequelize.query(`UPDATE visits v JOIN farms f ON f.organisation_id = v.organisation_id AND f.code = v.farm_code
    JOIN villages h ON h.id = f.village_id
    SET v.flags = JSON_SET(v.flags, '$.farmInOtherVillage', h.name) WHERE f.village_id <> v.village_id`)
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.sequelize.query('UPDATE visits SET flags = JSON_REMOVE(flags, \'$.farmInOtherVillage\') WHERE JSON_EXISTS(flags, \'$.farmInOtherVillage\')')
  await qi.removeIndex('visits', 'visits_farm_round')
  await qi.removeColumn('visits', 'farm_id')
  await qi.dropTable('farms')
}
