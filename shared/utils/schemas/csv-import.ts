import { z } from 'zod'
import { isReservedKey, safeText } from './safe-text'

// CSV import of past survey data into a round: what the page sends to the preview and import routes.

/** The largest CSV text accepted, in bytes of UTF-8. */
export const IMPORT_MAX_BYTES = 10 * 1024 * 1024
/** The largest request body: the CSV text JSON-encoded (quotes and line breaks are escaped) plus the mapping. */
export const IMPORT_BODY_MAX_BYTES = 2 * IMPORT_MAX_BYTES + 256 * 1024
export const IMPORT_PREVIEW_ROWS = 20
/** At most this many problems are listed in an answer; the rejected-rows CSV always holds every one. */
export const IMPORT_REPORT_MAX = 500

export const IMPORT_MODE_VALUES = ['all-or-nothing', 'valid-only'] as const
export type ImportModeValue = typeof IMPORT_MODE_VALUES[number]

const column = safeText(z.string().max(200))

export const importRequestSchema = z.object({
  csv: z.string({ error: 'Choose a CSV file' }),
  fileName: safeText(z.string().trim().max(200)).default('upload.csv'),
  mode: z.enum(IMPORT_MODE_VALUES, { error: 'Choose how to import: all-or-nothing or valid-only' }).default('all-or-nothing'),
  mapping: z.object({
    farmCode: column.min(1, 'Choose the column with the farm code'),
    villageCode: column.min(1, 'Choose the column with the village code'),
    /** The day of the visit (YYYY-MM-DD); without it an imported visit is dated by the import. */
    visitDate: column.optional(),
    /** Question key → CSV column; a question left out (or mapped to '') is not imported. */
    questions: z.record(z.string().max(40).refine(k => !isReservedKey(k), 'This key is reserved'), column).default({})
  }, { error: 'Map the columns to the questions' }),
  /** An extra pair of words read as yes and no (on top of yes/no, 1/0, true/false), e.g. increase / decrease. */
  yesNoWords: z.object({
    yes: safeText(z.string().trim().max(40)),
    no: safeText(z.string().trim().max(40))
  }).optional()
})
export type ImportRequest = z.infer<typeof importRequestSchema>
export type ImportRequestInput = z.input<typeof importRequestSchema>

export interface ImportProblem {
  /** The record's row in the file as a spreadsheet shows it: the header is row 1, the first record row 2. */
  row: number
  /** farmCode, villageCode, a question key, or row for the record as a whole. */
  field: string
  column: string | null
  message: string
}

export interface ImportPreview {
  columns: string[]
  delimiter: string
  rowCount: number
  validCount: number
  rejectedCount: number
  /** The first rows as mapped: farm code, village code and typed answers. */
  rows: Array<{ row: number, farmCode: string, villageCode: string, visitDate: string | null, answers: Record<string, unknown>, valid: boolean }>
  /** Mapping problems that concern every row (a required question with no column). */
  mappingProblems: string[]
  report: ImportProblem[]
  reportTruncated: boolean
}

export interface ImportOutcome {
  message: string
  importId?: number
  rowCount: number
  importedCount: number
  rejectedCount: number
  report: ImportProblem[]
  reportTruncated: boolean
  /** The rejected rows as they were in the file, with a reason column; empty when nothing was rejected. */
  rejectedCsv: string
}
