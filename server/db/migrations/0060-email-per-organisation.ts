import { QueryTypes, type QueryInterface } from 'sequelize'

/**
 * An e-mail address is unique within an organisation, not across them, so an admin inviting an address that
 * another organisation uses gets the same answer as for a new address (nothing tells them the address exists
 * elsewhere). Sign-in stays unambiguous: at most one account per address can hold a password — a unique index on
 * a generated column that is the address when a password is set and NULL otherwise (NULLs never clash).
 */
export async function up({ context: qi }: { context: QueryInterface }) {
  const indexes = await qi.sequelize.query<{ name: string }>(`SELECT DISTINCT INDEX_NAME AS name FROM information_schema.STATISTICS
    WHERE TABLE_SCHEMA = DATABASE() AND TABLE_NAME = 'users' AND COLUMN_NAME = 'email' AND NON_UNIQUE = 0`, { type: QueryTypes.SELECT })
  for (const { name } of indexes) await qi.sequelize.query(`ALTER TABLE users DROP INDEX \`${name}\``)
  await qi.sequelize.query(`ALTER TABLE users
    ADD COLUMN signin_email VARCHAR(254) AS (IF(password_hash IS NULL, NULL, email)) PERSISTENT,
    ADD UNIQUE INDEX users_organisation_email (organisation_id, email),
    ADD UNIQUE INDEX users_signin_email (signin_email),
    ADD INDEX users_email (email)`)
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.sequelize.query(`ALTER TABLE users DROP INDEX users_signin_email, DROP INDEX users_organisation_email, DROP INDEX users_email, DROP COLUMN signin_email, ADD UNIQUE INDEX email (email)`)
}
