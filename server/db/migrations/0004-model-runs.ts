import { DataTypes, type QueryInterface } from 'sequelize'

// Stored model fits. Results are kept whole (JSON, up to a few MB) so a run can be shown and exported
// exactly as it was computed.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.createTable('model_runs', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'organisations', key: 'id' } },
    round_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'rounds', key: 'id' } },
    created_by: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'users', key: 'id' } },
    status: { type: DataTypes.ENUM('running', 'done', 'failed'), allowNull: false, defaultValue: 'running' },
    request: { type: DataTypes.JSON, allowNull: false },
    spec: { type: DataTypes.JSON, allowNull: false },
    questionnaire_version_ids: { type: DataTypes.JSON, allowNull: false },
    rows_hash: { type: DataTypes.CHAR(64), allowNull: false },
    used_rows_hash: { type: DataTypes.CHAR(64), allowNull: false },
    row_count: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    excluded: { type: DataTypes.JSON, allowNull: false },
    engine_version: { type: DataTypes.STRING(20), allowNull: false },
    // LONGTEXT-backed JSON: MariaDB's JSON is an alias of LONGTEXT with a validity check.
    results: { type: DataTypes.JSON, allowNull: true },
    error: { type: DataTypes.JSON, allowNull: true },
    duration_ms: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false },
    finished_at: { type: DataTypes.DATE, allowNull: true }
  })
  await qi.addIndex('model_runs', ['organisation_id', 'round_id', 'created_at'])
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.dropTable('model_runs')
}
