import { DataTypes, type QueryInterface } from 'sequelize'
import { ROLES } from '../../../shared/utils/roles'

// Organisations, people, the audit log and the sign-in limiter.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.createTable('organisations', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    name: { type: DataTypes.STRING(160), allowNull: false },
    slug: { type: DataTypes.STRING(80), allowNull: false, unique: true },
    settings: { type: DataTypes.JSON, allowNull: false },
    created_at: { type: DataTypes.DATE, allowNull: false },
    updated_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.createTable('users', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: {
      type: DataTypes.INTEGER.UNSIGNED,
      allowNull: false,
      references: { model: 'organisations', key: 'id' },
      onDelete: 'RESTRICT'
    },
    email: { type: DataTypes.STRING(254), allowNull: false, unique: true },
    name: { type: DataTypes.STRING(160), allowNull: false },
    role: { type: DataTypes.ENUM(...ROLES), allowNull: false },
    password_hash: { type: DataTypes.STRING(255), allowNull: true },
    active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
    last_sign_in_at: { type: DataTypes.DATE, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false },
    updated_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.createTable('audit_entries', {
    id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    actor_user_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    actor_email: { type: DataTypes.STRING(254), allowNull: true },
    action: { type: DataTypes.STRING(64), allowNull: false },
    entity_type: { type: DataTypes.STRING(64), allowNull: true },
    entity_id: { type: DataTypes.STRING(64), allowNull: true },
    ip: { type: DataTypes.STRING(45), allowNull: true },
    details: { type: DataTypes.JSON, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.addIndex('audit_entries', ['organisation_id', 'created_at'])
  await qi.addIndex('audit_entries', ['action'])
  await qi.createTable('sign_in_attempts', {
    id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
    email: { type: DataTypes.STRING(254), allowNull: false },
    ip: { type: DataTypes.STRING(45), allowNull: false },
    created_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.addIndex('sign_in_attempts', ['email', 'created_at'])
  await qi.addIndex('sign_in_attempts', ['ip', 'created_at'])
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.dropTable('sign_in_attempts')
  await qi.dropTable('audit_entries')
  await qi.dropTable('users')
  await qi.dropTable('organisations')
}
