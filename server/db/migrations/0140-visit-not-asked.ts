import { DataTypes, type QueryInterface } from 'sequelize'

// The questions a visit did not ask because their condition hid them: kept apart from the answers so that "not asked"
// never reads as "left empty". A JSON list of question keys; NULL (every visit before conditions) means none.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.addColumn('visits', 'not_asked', { type: DataTypes.JSON, allowNull: true })
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.removeColumn('visits', 'not_asked')
}
