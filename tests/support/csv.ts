import Papa from 'papaparse'
import { expect } from 'vitest'

/** Parses a CSV and checks it is one rectangular table: a header on row 1, every row as wide, no comment lines. */
export function rectangular(text: string): string[][] {
  const parsed = Papa.parse<string[]>(text.trimEnd(), { skipEmptyLines: false })
  expect(parsed.errors).toEqual([])
  const rows = parsed.data
  expect(rows.length).toBeGreaterThan(0)
  expect(rows[0]!.join(',')).not.toMatch(/^#/)
  for (const row of rows) expect(row.length).toBe(rows[0]!.length)
  return rows
}
