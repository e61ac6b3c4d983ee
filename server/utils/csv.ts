import { neutraliseCsvCell } from '#shared/utils/csv-cells'

/** One CSV cell, formulas neutralised, quoted when it holds a comma, a quote or a line break (RFC 4180). */
export function csvCell(value: unknown): string {
  const text = neutraliseCsvCell(value)
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text
}

export function csvRow(cells: unknown[]): string {
  return cells.map(csvCell).join(',')
}
