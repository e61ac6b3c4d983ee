import { parseCsv } from '../imports/csv-rows'
import { DECIMAL } from '../stats/values'
import { type SampleFarmInput, sampleFarmSchema } from '../schemas/sample'
import type { SampleListProblem } from '../../types/sample'

// Reads an uploaded sample list: one farm a row, columns named in the header (any case, any order):
// farm_code and rank are needed; head_name, hint, lat and lon are optional. Pure: text in, farms or problems out.

export const SAMPLE_CSV_COLUMNS = {
  farmCode: 'farm_code',
  rank: 'rank',
  headName: 'head_name',
  hint: 'hint',
  lat: 'lat',
  lon: 'lon'
} as const

export interface SampleCsvResult { farms: SampleFarmInput[], problems: SampleListProblem[] }

function numberCell(text: string, decimalComma: boolean): number | null | typeof Number.NaN {
  const t = text.trim()
  if (!t || t.toUpperCase() === 'NA') return null
  const s = decimalComma ? t.replace(',', '.') : t
  return DECIMAL.test(s) ? Number(s) : Number.NaN
}

/** Throws CsvFileError for a file that cannot be read at all (empty, one column, not UTF-8, a column named twice). */
export function readSampleCsv(text: string): SampleCsvResult {
  const parsed = parseCsv(text)
  const decimalComma = parsed.delimiter !== ','
  const at = new Map(parsed.columns.map((c, i) => [c.trim().toLowerCase(), i]))
  const problems: SampleListProblem[] = []
  for (const needed of [SAMPLE_CSV_COLUMNS.farmCode, SAMPLE_CSV_COLUMNS.rank]) {
    if (!at.has(needed)) problems.push({ row: 1, column: needed, message: `The header has no column "${needed}".` })
  }
  if (problems.length) return { farms: [], problems }
  const farms: SampleFarmInput[] = []
  const farmRows: number[] = []
  const cell = (values: string[], column: string) => {
    const i = at.get(column)
    return i === undefined ? '' : (values[i] ?? '')
  }
  for (const { row, values } of parsed.records) {
    if (values.length !== parsed.columns.length) {
      problems.push({ row, column: null, message: `This row has ${values.length} values; the header has ${parsed.columns.length} columns.` })
      continue
    }
    const rank = numberCell(cell(values, SAMPLE_CSV_COLUMNS.rank), false)
    const lat = numberCell(cell(values, SAMPLE_CSV_COLUMNS.lat), decimalComma)
    const lon = numberCell(cell(values, SAMPLE_CSV_COLUMNS.lon), decimalComma)
    const candidate = {
      farmCode: cell(values, SAMPLE_CSV_COLUMNS.farmCode),
      rank: rank === null ? undefined : rank,
      headName: cell(values, SAMPLE_CSV_COLUMNS.headName),
      hint: cell(values, SAMPLE_CSV_COLUMNS.hint),
      lat,
      lon
    }
    const result = sampleFarmSchema.safeParse(candidate)
    if (!result.success) {
      for (const issue of result.error.issues) {
        const field = String(issue.path[0] ?? '') as keyof typeof SAMPLE_CSV_COLUMNS
        problems.push({ row, column: SAMPLE_CSV_COLUMNS[field] ?? null, message: field === 'rank' && rank === null ? 'Give the rank: 0 for the main sample, 1, 2, … for replacements' : issue.message })
      }
      continue
    }
    farms.push(result.data)
    farmRows.push(row)
  }
  // Problems of the list as a whole, named by the row of the second occurrence.
  const seen = new Set<string>()
  const ranks = new Set<number>()
  for (const [i, f] of farms.entries()) {
    const row = farmRows[i] ?? null
    if (seen.has(f.farmCode.toLowerCase())) problems.push({ row, column: SAMPLE_CSV_COLUMNS.farmCode, message: `Farm ${f.farmCode} is listed twice.` })
    seen.add(f.farmCode.toLowerCase())
    if (f.rank > 0) {
      if (ranks.has(f.rank)) problems.push({ row, column: SAMPLE_CSV_COLUMNS.rank, message: `Two replacements have rank ${f.rank}: give each its own place in the order.` })
      ranks.add(f.rank)
    }
  }
  if (!problems.length && !farms.some(f => f.rank === 0)) problems.push({ row: null, column: SAMPLE_CSV_COLUMNS.rank, message: 'The list has no main-sample farm (rank 0).' })
  return { farms, problems }
}
