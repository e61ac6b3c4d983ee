import { DataTypes, type QueryInterface } from 'sequelize'

// CSV imports of past survey data: where each visit came from, and one row per import.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.addColumn('visits', 'source', { type: DataTypes.ENUM('device', 'import'), allowNull: false, defaultValue: 'device' })
  await qi.createTable('imports', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'organisations', key: 'id' } },
    round_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'rounds', key: 'id' } },
    questionnaire_version_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'questionnaire_versions', key: 'id' } },
    imported_by: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'users', key: 'id' } },
    file_name: { type: DataTypes.STRING(200), allowNull: false },
    // sha256 of the CSV text: the same file is not imported twice into one round.
    file_sha256: { type: DataTypes.CHAR(64), allowNull: false },
    mode: { type: DataTypes.ENUM('all-or-nothing', 'valid-only'), allowNull: false },
    rows_total: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    rows_imported: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    rows_rejected: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    created_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.addIndex('imports', ['round_id', 'file_sha256'], { unique: true })
  await qi.addColumn('visits', 'import_id', { type: DataTypes.INTEGER.UNSIGNED, allowNull: true, references: { model: 'imports', key: 'id' } })
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.removeColumn('visits', 'import_id')
  await qi.dropTable('imports')
  await qi.removeColumn('visits', 'source')
}
