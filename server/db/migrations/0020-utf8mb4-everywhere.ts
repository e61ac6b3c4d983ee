import { QueryTypes, type QueryInterface } from 'sequelize'

// Every table in utf8mb4, so that any text the schemas let through (emoji and all other characters outside the
// Basic Multilingual Plane) is stored as typed, never as "?". A database created by `npm start` or `npm test` is
// already utf8mb4 and this does nothing; one created elsewhere with another default is converted here.
export async function up({ context: qi }: { context: QueryInterface }) {
  const sequelize = qi.sequelize
  const [database] = await sequelize.query<{ name: string }>('SELECT DATABASE() AS name', { type: QueryTypes.SELECT })
  const tables = await sequelize.query<{ name: string }>(
    `SELECT TABLE_NAME AS name FROM information_schema.TABLES
     WHERE TABLE_SCHEMA = DATABASE() AND TABLE_TYPE = 'BASE TABLE' AND TABLE_COLLATION NOT LIKE 'utf8mb4%'`,
    { type: QueryTypes.SELECT })
  await sequelize.query(`ALTER DATABASE \`${database!.name}\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`)
  if (!tables.length) return
  // One connection for all statements: text columns that foreign keys point at (visit ids) convert only with the
  // checks off, and that setting belongs to the connection.
  await sequelize.transaction(async (transaction) => {
    await sequelize.query('SET foreign_key_checks = 0', { transaction })
    for (const { name } of tables) {
      await sequelize.query(`ALTER TABLE \`${name}\` CONVERT TO CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`, { transaction })
    }
    await sequelize.query('SET foreign_key_checks = 1', { transaction })
  })
}

export async function down() {
  // Converting back could lose characters; nothing to undo.
}
