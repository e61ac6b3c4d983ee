import { DataTypes, type QueryInterface } from 'sequelize'

// People management: session versions (so a password change ends other sessions), single-use links for
// invitations and password resets (only a hash is stored), the outgoing mail queue, and counters for the
// public link routes' rate limits.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.addColumn('users', 'session_version', { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 })
  await qi.addColumn('users', 'password_changed_at', { type: DataTypes.DATE, allowNull: true })
  await qi.addColumn('users', 'invited_at', { type: DataTypes.DATE, allowNull: true })
  await qi.createTable('user_tokens', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    user_id: {
      type: DataTypes.INTEGER.UNSIGNED,
      allowNull: false,
      references: { model: 'users', key: 'id' },
      onDelete: 'CASCADE'
    },
    purpose: { type: DataTypes.ENUM('invitation', 'reset'), allowNull: false },
    token_hash: { type: DataTypes.CHAR(64), allowNull: false },
    expires_at: { type: DataTypes.DATE, allowNull: false },
    used_at: { type: DataTypes.DATE, allowNull: true },
    revoked_at: { type: DataTypes.DATE, allowNull: true },
    created_by_user_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.addIndex('user_tokens', ['user_id', 'purpose'])
  await qi.createTable('mail_messages', {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    user_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    kind: { type: DataTypes.STRING(40), allowNull: false },
    to_address: { type: DataTypes.STRING(254), allowNull: false },
    subject: { type: DataTypes.STRING(200), allowNull: false },
    text_body: { type: DataTypes.TEXT('medium'), allowNull: false },
    html_body: { type: DataTypes.TEXT('medium'), allowNull: true },
    sensitive: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
    status: { type: DataTypes.ENUM('queued', 'sent', 'failed'), allowNull: false, defaultValue: 'queued' },
    attempts: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
    last_error: { type: DataTypes.STRING(500), allowNull: true },
    next_attempt_at: { type: DataTypes.DATE, allowNull: true },
    sent_at: { type: DataTypes.DATE, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false },
    updated_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.addIndex('mail_messages', ['status', 'next_attempt_at'])
  await qi.addIndex('mail_messages', ['user_id', 'kind'])
  await qi.createTable('rate_events', {
    id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
    bucket: { type: DataTypes.STRING(32), allowNull: false },
    subject: { type: DataTypes.STRING(254), allowNull: false },
    created_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.addIndex('rate_events', ['bucket', 'subject', 'created_at'])
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.dropTable('rate_events')
  await qi.dropTable('mail_messages')
  await qi.dropTable('user_tokens')
  await qi.removeColumn('users', 'invited_at')
  await qi.removeColumn('users', 'password_changed_at')
  await qi.removeColumn('users', 'session_version')
}
