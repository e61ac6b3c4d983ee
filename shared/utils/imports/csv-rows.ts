import Papa from 'papaparse'
import type { AnswerCheck } from '../schemas/checks'
import { type Question, OUTCOME_KEY } from '../schemas/questionnaire'
import { answersSchemaFor, farmCodeSchema } from '../schemas/visit'
import { ownValue } from '../schemas/safe-text'
import type { ImportProblem, ImportRequest } from '../schemas/csv-import'
import { neutraliseCsvCell } from '../csv-cells'

// Pure CSV handling for the import of past survey data: parse the text, map its columns to the round's
// questions, and check every record with the questionnaire's own zod schema. No I/O: text in, rows out.

/** A problem with the file as a whole (empty, one column, wrong encoding): the routes answer 400 with it. */
export class CsvFileError extends Error {}

export interface ParsedCsv {
  columns: string[]
  delimiter: string
  /** Data records only (the header and blank lines left out), each with its row number in the file. */
  records: Array<{ row: number, values: string[] }>
}

const REPLACEMENT_CHARACTER = '\uFFFD'
// Separators a file might use that are not read as such: named in the one-column message.
const OTHER_SEPARATORS: Array<[string, string]> = [[':', 'colons'], ['~', 'tildes'], ['^', 'carets'], ['#', 'hash signs'], ['/', 'slashes'], [' ', 'spaces']]
const SEPARATOR_NAMES: Record<string, string> = { ',': 'commas', ';': 'semicolons', '\t': 'tabs', '|': 'vertical bars' }

export function parseCsv(input: string): ParsedCsv {
  const text = input.startsWith('\uFEFF') ? input.slice(1) : input
  if (text.includes(REPLACEMENT_CHARACTER)) {
    throw new CsvFileError('The file is not in UTF-8: some characters could not be read. Save it again with the UTF-8 encoding and choose it again.')
  }
  if (!text.trim()) throw new CsvFileError('The file is empty.')
  // Papa guesses one line ending from the first break, so a CRLF header with LF rows would merge the rows: every
  // break (CRLF, LF or a lone CR) is made LF first. Inside a quoted cell this only changes which break the cell holds.
  const result = Papa.parse<string[]>(text.replace(/\r\n?/g, '\n'), { header: false, newline: '\n', skipEmptyLines: false, delimitersToGuess: [',', ';', '\t', '|'] })
  const rows = result.data
  // A nameless column (often the row names a statistics package writes first) gets a name of its own.
  const header = (rows[0] ?? []).map((h, i) => h.trim() || `column ${i + 1}`)
  if (header.length < 2) {
    const found = OTHER_SEPARATORS.find(([ch]) => (rows[0]?.[0] ?? '').split(ch).length > 2)
    throw new CsvFileError(found
      ? `Only one column was found: the file seems to be separated by ${found[1]}. Save it with commas, semicolons or tabs between the columns.`
      : 'Only one column was found. A file to import needs separate columns for the farm code, the village code and the answers, separated by commas, semicolons or tabs.')
  }
  const twice = header.find((h, i) => header.indexOf(h) !== i)
  if (twice) throw new CsvFileError(`The header names the column "${twice}" twice. Give every column its own name.`)
  const records: ParsedCsv['records'] = []
  rows.forEach((values, i) => {
    if (i === 0) return
    if (values.length === 1 && values[0]!.trim() === '') return // a blank line
    records.push({ row: i + 1, values })
  })
  if (!records.length) throw new CsvFileError('The file has a header row but no data rows.')
  return { columns: header, delimiter: result.meta.delimiter, records }
}

export function separatorName(delimiter: string) {
  return SEPARATOR_NAMES[delimiter] ?? `"${delimiter}"`
}

export interface CheckedRow {
  row: number
  values: string[]
  farmCode: string
  villageCode: string
  /** The visit's day (YYYY-MM-DD) from the mapped date column, or null. */
  visitDate: string | null
  answers: Record<string, unknown>
  problems: ImportProblem[]
}

export interface CheckResult {
  rows: CheckedRow[]
  /** Problems of the mapping itself that concern every row (a required question without a column). */
  mappingProblems: string[]
}

const YES = ['yes', '1', 'true']
const NO = ['no', '0', 'false']
const NUMBER = /^[-+]?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?$/
// Read as "no answer": an empty cell, or NA as statistics files write it.
const isMissingCell = (s: string) => s === '' || s === 'NA'

// A decimal comma (2,5) as files separated by semicolons or tabs write it where the comma is the decimal mark.
const DECIMAL_COMMA = /^[-+]?\d+,\d+$/
const ISO_DAY = /^(\d{4})-(\d{2})-(\d{2})$/

function typed(q: Question, cell: string, words: { yes: Set<string>, no: Set<string> }, decimalComma: boolean): unknown {
  const s = cell.trim()
  if (isMissingCell(s)) return undefined
  switch (q.type) {
    case 'number':
    case 'whole': {
      const n = decimalComma && DECIMAL_COMMA.test(s) ? s.replace(',', '.') : s
      return NUMBER.test(n) ? Number(n) : s
    }
    case 'yesno': {
      const w = s.toLowerCase()
      if (words.yes.has(w)) return true
      if (words.no.has(w)) return false
      return s
    }
    case 'choice': {
      const w = s.toLowerCase()
      return q.options.find(o => o.value === w || o.label.toLowerCase() === w)?.value ?? s
    }
    case 'several':
      // Several answers in one cell, separated by ; or | (a comma may be the file's own separator), each an option's
      // code or label; what matches no option stays as typed, so the schema names it.
      return s.split(/[;|]/).map(part => part.trim()).filter(Boolean).map((part) => {
        const w = part.toLowerCase()
        return q.options.find(o => o.value === w || o.label.toLowerCase() === w)?.value ?? part
      })
    default:
      return s
  }
}

/** Mapping problems that make the request itself unusable (an unknown column or question): thrown as 400. */
export function mappingErrors(request: ImportRequest, columns: readonly string[], questions: readonly Question[]): string[] {
  const errors: string[] = []
  const known = new Set(columns)
  const keys = new Set(questions.map(q => q.key))
  const check = (what: string, col: string) => {
    if (col && !known.has(col)) errors.push(`${what}: the file has no column "${col}".`)
  }
  check('Farm code', request.mapping.farmCode)
  check('Village code', request.mapping.villageCode)
  if (request.mapping.visitDate) check('Visit date', request.mapping.visitDate)
  for (const [key, col] of Object.entries(request.mapping.questions)) {
    if (!keys.has(key)) errors.push(`"${key}" is not a question of this round's questionnaire.`)
    else check(`Question ${key}`, col)
  }
  return errors
}

/** A visit day written YYYY-MM-DD, a real date, not after `today`; otherwise the reason it is refused. */
export function visitDayOf(raw: string, today: string): { day: string } | { problem: string } {
  const m = ISO_DAY.exec(raw)
  const date = m ? new Date(`${raw}T00:00:00Z`) : null
  if (!m || Number.isNaN(date!.getTime()) || !date!.toISOString().startsWith(raw)) return { problem: `Write the visit date as YYYY-MM-DD, e.g. 2026-03-14 (found "${raw}")` }
  if (raw > today) return { problem: `The visit date ${raw} is in the future` }
  return { day: raw }
}

/** Maps and checks every record: farm code, village of the round, and the answers with the questionnaire's schema. */
export function checkRows(parsed: ParsedCsv, questions: readonly Question[], request: ImportRequest, villageCodes: readonly string[], today = new Date().toISOString().slice(0, 10), checks: readonly AnswerCheck[] = []): CheckResult {
  const decimalComma = parsed.delimiter !== ','
  const index = new Map(parsed.columns.map((c, i) => [c, i]))
  const columnOf = (key: string) => ownValue(request.mapping.questions, key)
  const mapped = questions.filter(q => columnOf(q.key))
  const unmappedRequired = questions.filter(q => q.required && !columnOf(q.key))
  const mappingProblems = unmappedRequired.map(q => q.key === OUTCOME_KEY
    ? `Choose the column with the outcome (${OUTCOME_KEY}): it is required.`
    : `Choose a column for the required question "${q.label}" (${q.key}).`)
  const skip = new Set(unmappedRequired.map(q => q.key))
  const schema = answersSchemaFor(questions, checks)
  const extra = request.yesNoWords
  const words = {
    yes: new Set([...YES, ...(extra?.yes ? [extra.yes.toLowerCase()] : [])]),
    no: new Set([...NO, ...(extra?.no ? [extra.no.toLowerCase()] : [])])
  }
  const villages = new Map(villageCodes.map(c => [c.toLowerCase(), c]))
  const villageList = villageCodes.slice(0, 12).join(', ') + (villageCodes.length > 12 ? ', …' : '')
  const cell = (values: string[], column: string) => values[index.get(column)!] ?? ''

  const rows = parsed.records.map(({ row, values }): CheckedRow => {
    const problems: ImportProblem[] = []
    const add = (field: string, column: string | null, message: string) => problems.push({ row, field, column, message })
    const farmRaw = cell(values, request.mapping.farmCode).trim()
    const villageRaw = cell(values, request.mapping.villageCode).trim()
    if (values.length !== parsed.columns.length) {
      add('row', null, `This row has ${values.length} values; the header has ${parsed.columns.length} columns.`)
      return { row, values, farmCode: farmRaw, villageCode: villageRaw, visitDate: null, answers: {}, problems }
    }
    const farm = farmCodeSchema.safeParse(farmRaw)
    if (!farm.success) add('farmCode', request.mapping.farmCode, farm.error.issues[0]!.message)
    const village = villages.get(villageRaw.toLowerCase())
    if (!villageRaw) add('villageCode', request.mapping.villageCode, 'Enter the village code')
    else if (!village) add('villageCode', request.mapping.villageCode, `"${villageRaw}" is not a village of this round (${villageList})`)
    let visitDate: string | null = null
    if (request.mapping.visitDate) {
      const raw = cell(values, request.mapping.visitDate).trim()
      if (!isMissingCell(raw)) {
        const day = visitDayOf(raw, today)
        if ('day' in day) visitDate = day.day
        else add('visitDate', request.mapping.visitDate, day.problem)
      }
    }
    const answers: Record<string, unknown> = {}
    for (const q of mapped) {
      const v = typed(q, cell(values, columnOf(q.key)!), words, decimalComma)
      if (v !== undefined) answers[q.key] = v
    }
    const parsedAnswers = schema.safeParse(answers)
    if (!parsedAnswers.success) {
      const seen = new Set<string>()
      for (const issue of parsedAnswers.error.issues) {
        const key = String(issue.path[0] ?? '')
        if (skip.has(key) || seen.has(key)) continue
        seen.add(key)
        const column = columnOf(key) ?? null
        const raw = column ? cell(values, column).trim() : ''
        add(key, column, raw ? `${issue.message} (found "${raw}")` : issue.message)
      }
    }
    return {
      row,
      values,
      farmCode: farm.success ? farm.data : farmRaw,
      villageCode: village ?? villageRaw,
      visitDate,
      answers: parsedAnswers.success ? parsedAnswers.data as Record<string, unknown> : answers,
      problems
    }
  })
  return { rows, mappingProblems }
}

const FIELD_NAMES: Record<string, string> = { farmCode: 'Farm code', villageCode: 'Village code', visitDate: 'Visit date', row: 'Row' }

/** What a problem concerns, in words: a question by its label, never its internal key. */
export function problemFieldName(field: string, questions: readonly Question[]): string {
  return FIELD_NAMES[field] ?? questions.find(q => q.key === field)?.label ?? 'An answer'
}

/** The rejected rows as they were in the file, plus a reason column, as comma-separated text. */
export function rejectedRowsCsv(columns: readonly string[], rows: readonly CheckedRow[], questions: readonly Question[] = []): string {
  const bad = rows.filter(r => r.problems.length)
  if (!bad.length) return ''
  const reason = (r: CheckedRow) => r.problems.map(p => `${problemFieldName(p.field, questions)} — ${p.message}`).join('; ')
  return Papa.unparse({ fields: [...columns, 'reason'].map(neutraliseCsvCell), data: bad.map(r => [...r.values, reason(r)].map(neutraliseCsvCell)) }, { newline: '\n' })
}
