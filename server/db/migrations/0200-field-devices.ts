import { DataTypes, type QueryInterface } from 'sequelize'

// The enumerators' tablets that hold an encrypted field store (one row per person and browser profile).
// - escrow_key: a random AES key the server releases only to the signed-in owner of a device that is not revoked;
//   the tablet keeps a copy of its data key wrapped by it, so a forgotten PIN can be replaced after an online
//   sign-in with the password. Whoever can read this table can already read every visit the server holds.
// - token_hash: SHA-256 of a random token the tablet keeps, which lets it ask "am I revoked?" even after its
//   sessions were ended by the revocation.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.createTable('field_devices', {
    id: { type: DataTypes.CHAR(36), primaryKey: true },
    organisation_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'organisations', key: 'id' } },
    user_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: 'users', key: 'id' } },
    label: { type: DataTypes.STRING(80), allowNull: false },
    escrow_key: { type: DataTypes.CHAR(44), allowNull: false },
    token_hash: { type: DataTypes.CHAR(64), allowNull: false },
    created_at: { type: DataTypes.DATE(3), allowNull: false },
    last_seen_at: { type: DataTypes.DATE(3), allowNull: true },
    revoked_at: { type: DataTypes.DATE(3), allowNull: true },
    revoked_by: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true }
  })
  await qi.addIndex('field_devices', ['organisation_id', 'user_id'])
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.dropTable('field_devices')
}
