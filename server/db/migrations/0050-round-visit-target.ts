import { DataTypes, type QueryInterface } from 'sequelize'

// The coordinator's target of visits per village for a round: villages below it are marked on the map and its table.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.addColumn('rounds', 'target_visits_per_village', { type: DataTypes.SMALLINT.UNSIGNED, allowNull: true })
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.removeColumn('rounds', 'target_visits_per_village')
}
