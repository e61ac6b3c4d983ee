import { DataTypes, type QueryInterface } from 'sequelize'

// A round's target of visits per village: the round page measures progress against it. Null = no target set.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.addColumn('rounds', 'target_visits_per_village', { type: DataTypes.INTEGER.UNSIGNED, allowNull: true })
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.removeColumn('rounds', 'target_visits_per_village')
}
