import { DataTypes, type QueryInterface } from 'sequelize'

// The sample to visit, per round × village.
// - sample_villages: the stage-1 facts of one village in one round: how many farms the listing found (N_v) and the
//   probability that the village was drawn (P_v). The within-village probability is n_v / N_v, n_v being the number
//   of main-sample farms (rank 0) in sample_farms; the sampling weight of a listed farm is 1 / (P_v · n_v / N_v).
// - sample_farms: the drawn farms with their rank (0 = main sample, 1..n = replacements in the order to use them),
//   the head's name and a locating hint (personal data: erased on request and purged at retention, names_purged_at),
//   and the outcome of a non-interview recorded on the tablet (refused, absent, moved) with its note and the
//   replacement chosen. "Visited" is not stored here: it is read from the round's visits by farm code.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.createTable('sample_villages', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'organisations', key: 'id' } },
    round_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'rounds', key: 'id' } },
    village_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'villages', key: 'id' } },
    listed_farms: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    selection_probability: { type: DataTypes.DOUBLE, allowNull: true },
    updated_by: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    created_at: { type: DataTypes.DATE(3), allowNull: false },
    updated_at: { type: DataTypes.DATE(3), allowNull: false }
  })
  await qi.addIndex('sample_villages', ['round_id', 'village_id'], { unique: true })
  await qi.createTable('sample_farms', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'organisations', key: 'id' } },
    round_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'rounds', key: 'id' } },
    village_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'villages', key: 'id' } },
    farm_code: { type: DataTypes.STRING(40), allowNull: false },
    sample_rank: { type: DataTypes.SMALLINT.UNSIGNED, allowNull: false },
    head_name: { type: DataTypes.STRING(120), allowNull: true },
    hint: { type: DataTypes.STRING(200), allowNull: true },
    lat: { type: DataTypes.DOUBLE, allowNull: true },
    lon: { type: DataTypes.DOUBLE, allowNull: true },
    outcome: { type: DataTypes.STRING(16), allowNull: true },
    outcome_note: { type: DataTypes.STRING(300), allowNull: true },
    replaced_by: { type: DataTypes.STRING(40), allowNull: true },
    outcome_by: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    outcome_at: { type: DataTypes.DATE(3), allowNull: true },
    names_purged_at: { type: DataTypes.DATE(3), allowNull: true },
    created_at: { type: DataTypes.DATE(3), allowNull: false }
  })
  await qi.addIndex('sample_farms', ['round_id', 'village_id', 'farm_code'], { unique: true })
  await qi.addIndex('sample_farms', ['organisation_id', 'farm_code'])
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.dropTable('sample_farms')
  await qi.dropTable('sample_villages')
}
