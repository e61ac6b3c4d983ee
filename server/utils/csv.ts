import { strToU8, zipSync } from 'fflate'
import { neutraliseCsvCell } from '#shared/utils/csv-cells'

// Every CSV the product writes goes through `csvTable` (or `csvRow`): one rectangular table, its header on row 1,
// each cell quoted when needed (RFC 4180) and text that a spreadsheet would run as a formula made inert.

/** One CSV cell, formulas neutralised, quoted when it holds a comma, a quote or a line break (RFC 4180). */
export function csvCell(value: unknown): string {
  const text = typeof value === 'boolean' ? String(value) : neutraliseCsvCell(value)
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text
}

export function csvRow(cells: unknown[]): string {
  return cells.map(csvCell).join(',')
}

/** A whole CSV file: the header, then one line per row, every row as wide as the header. */
export function csvTable(header: string[], rows: unknown[][]): string {
  const lines = [csvRow(header)]
  for (const cells of rows) {
    if (cells.length !== header.length) throw new Error(`a CSV row has ${cells.length} cells for ${header.length} columns`)
    lines.push(csvRow(cells))
  }
  return `${lines.join('\n')}\n`
}

/** Several files in one zip (text as UTF-8), for exports that belong together: the tables and their read-me. */
export function zipFiles(files: Record<string, string>): Uint8Array {
  return zipSync(Object.fromEntries(Object.entries(files).map(([name, text]) => [name, strToU8(text)])), { level: 6, mtime: new Date('2026-01-01T00:00:00Z') })
}
