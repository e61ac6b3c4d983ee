import { DataTypes, type QueryInterface } from 'sequelize'

export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.createTable('publications', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'organisations', key: 'id' } },
    round_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'rounds', key: 'id' } },
    model_run_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'model_runs', key: 'id' } },
    note: { type: DataTypes.STRING(500), allowNull: false },
    content: { type: DataTypes.JSON, allowNull: false },
    tablet_aid: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
    active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
    published_by: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'users', key: 'id' } },
    withdrawn_at: { type: DataTypes.DATE, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.addIndex('publications', ['organisation_id', 'round_id', 'active'])
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.dropTable('publications')
}
