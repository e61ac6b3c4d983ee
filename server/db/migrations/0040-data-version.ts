import { DataTypes, type QueryInterface } from 'sequelize'

// A round-level counter of changes to its accepted visits (bumped in the same transaction as every such change),
// so a model run can tell whether its data changed by comparing two integers instead of re-reading every row.
// Model runs now answer before reading their rows: what the rows give (hashes, counts) is filled in by the fit.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.addColumn('rounds', 'data_version', { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 })
  await qi.addColumn('model_runs', 'data_version', { type: DataTypes.INTEGER.UNSIGNED, allowNull: true })
  await qi.changeColumn('model_runs', 'rows_hash', { type: DataTypes.CHAR(64), allowNull: true })
  await qi.changeColumn('model_runs', 'used_rows_hash', { type: DataTypes.CHAR(64), allowNull: true })
  await qi.changeColumn('model_runs', 'row_count', { type: DataTypes.INTEGER.UNSIGNED, allowNull: true })
  await qi.changeColumn('model_runs', 'questionnaire_version_ids', { type: DataTypes.JSON, allowNull: true })
  await qi.changeColumn('model_runs', 'excluded', { type: DataTypes.JSON, allowNull: true })
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.removeColumn('model_runs', 'data_version')
  await qi.removeColumn('rounds', 'data_version')
}
