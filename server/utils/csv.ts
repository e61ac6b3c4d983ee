/** One CSV cell, quoted when it holds a comma, a quote or a line break (RFC 4180). */
export function csvCell(value: unknown): string {
  const text = value === null || value === undefined ? '' : String(value)
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text
}

export function csvRow(cells: unknown[]): string {
  return cells.map(csvCell).join(',')
}
