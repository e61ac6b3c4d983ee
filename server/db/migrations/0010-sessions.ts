import { DataTypes, type QueryInterface } from 'sequelize'

// Server-side sessions: the sealed cookie carries only a random token whose SHA-256 is the row's key, so a
// session can be ended by the server (sign-out, "sign out everywhere", deactivation, a new password).
// They replace users.session_version, which could end every session of a person but never just one.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.createTable('sessions', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    user_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'users', key: 'id' } },
    token_hash: { type: DataTypes.CHAR(64), allowNull: false, unique: true },
    created_at: { type: DataTypes.DATE, allowNull: false },
    last_seen_at: { type: DataTypes.DATE, allowNull: false },
    expires_at: { type: DataTypes.DATE, allowNull: false },
    revoked_at: { type: DataTypes.DATE, allowNull: true },
    revoked_reason: { type: DataTypes.STRING(40), allowNull: true },
    user_agent: { type: DataTypes.STRING(255), allowNull: true },
    ip: { type: DataTypes.STRING(45), allowNull: true }
  })
  await qi.addIndex('sessions', ['user_id', 'revoked_at'])
  // Plain SQL: Sequelize's removeColumn first looks up foreign keys with a query the mariadb driver's result breaks.
  await qi.sequelize.query('ALTER TABLE users DROP COLUMN session_version')
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.addColumn('users', 'session_version', { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 })
  await qi.dropTable('sessions')
}
