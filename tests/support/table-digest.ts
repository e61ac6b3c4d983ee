// A table's content as row count plus a sum of per-row CRC32s over its stored columns, for "the same rows" checks
// (backup → restore, Galera nodes, "nothing was written"). Not CHECKSUM TABLE: it also reads generated columns,
// whose bytes MariaDB does not keep stable — the same users table gave two checksums before and after FLUSH TABLES
// with no write in between. Generated columns are derived from stored ones, so leaving them out loses nothing.

/** SQL listing, per table of `schema`, its stored (not generated) columns quoted and comma-separated. */
export function storedColumnsSql(schema: string): string {
  return `SELECT TABLE_NAME AS name, GROUP_CONCAT(CONCAT('\`', COLUMN_NAME, '\`') ORDER BY ORDINAL_POSITION SEPARATOR ', ') AS columns
    FROM information_schema.COLUMNS WHERE TABLE_SCHEMA = '${schema}' AND IS_GENERATED = 'NEVER' GROUP BY TABLE_NAME ORDER BY TABLE_NAME`
}

/** SQL answering one row: the table's row count and the sum of CRC32 of each row's stored columns as JSON. */
export function tableDigestSql(schema: string, table: string, columns: string): string {
  return `SELECT COUNT(*) AS count, COALESCE(SUM(CRC32(JSON_ARRAY(${columns}))), 0) AS digest FROM \`${schema}\`.\`${table}\``
}
