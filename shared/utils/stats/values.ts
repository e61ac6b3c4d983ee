/**
 * Reading raw cell values (from JSON rows, form data or CSV text) into model values.
 * Missing means null, undefined, an empty string or the text 'NA'. Numbers must be finite.
 */
import { EngineInputError } from './errors'

export type DataRows = ReadonlyArray<Readonly<Record<string, unknown>>>
/**
 * A text column stored as codes into its distinct values (code −1: missing): compact, and it crosses to a
 * worker thread as one transferable buffer instead of a million strings.
 */
export interface CodedColumn {
  codes: Int32Array
  levels: string[]
}
/** Column-oriented data: one array (plain or typed) or coded column per variable, all of the same length. */
export type DataColumns = Readonly<Record<string, ArrayLike<unknown> | CodedColumn>>

export function isCodedColumn(col: unknown): col is CodedColumn {
  return typeof col === 'object' && col !== null && (col as CodedColumn).codes instanceof Int32Array && Array.isArray((col as CodedColumn).levels)
}

function columnLength(col: ArrayLike<unknown> | CodedColumn): number {
  return isCodedColumn(col) ? col.codes.length : col.length
}
export type DataInput = DataRows | DataColumns

export interface DataAccessor {
  nRows: number
  has: (name: string) => boolean
  column: (name: string) => (i: number) => unknown
}

/** Uniform access to row- or column-oriented input without copying it. */
export function accessData(data: DataInput): DataAccessor {
  if (Array.isArray(data)) {
    const rows = data as DataRows
    const names = new Set<string>()
    for (const r of rows.slice(0, 1000)) for (const key of Object.keys(r)) names.add(key)
    return {
      nRows: rows.length,
      has: name => names.has(name) || rows.some(r => Object.prototype.hasOwnProperty.call(r, name)),
      column: name => (i: number) => rows[i]![name]
    }
  }
  const cols = data as DataColumns
  const keys = Object.keys(cols)
  const n = keys.length ? columnLength(cols[keys[0]!]!) : 0
  for (const key of keys) {
    if (columnLength(cols[key]!) !== n) {
      throw new EngineInputError('invalid_spec', `column '${key}' has ${columnLength(cols[key]!)} values, expected ${n}`, [key])
    }
  }
  return {
    nRows: n,
    has: name => Object.prototype.hasOwnProperty.call(cols, name),
    column: (name) => {
      const col = cols[name]!
      if (isCodedColumn(col)) {
        const { codes, levels } = col
        return (i: number) => (codes[i]! < 0 ? null : levels[codes[i]!])
      }
      return (i: number) => col[i]
    }
  }
}

export function isMissing(v: unknown): boolean {
  if (v === null || v === undefined) return true
  if (typeof v === 'string') {
    const s = v.trim()
    return s === '' || s === 'NA'
  }
  return false
}

/**
 * Decimal notation: optional sign, digits with at most one '.', optional exponent (1e3 and 2.5E-4 are how
 * statistics programs write small and large values). Not hexadecimal, binary, octal, Infinity or NaN.
 */
export const DECIMAL = /^[-+]?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?$/

/** A finite number from a number, boolean or decimal string; throws otherwise. */
export function toNumber(v: unknown, variable: string, row: number): number {
  let x: number
  if (typeof v === 'number') x = v
  else if (typeof v === 'boolean') x = v ? 1 : 0
  else if (typeof v === 'string') {
    const s = v.trim()
    // Decimal notation only: Number() would also read 0x1A, 0b11, 0o7 and Infinity.
    if (!DECIMAL.test(s)) throw new EngineInputError('invalid_value', `'${variable}' has a value '${v}' in row ${row + 1} that is not a decimal number`, [variable])
    x = Number(s)
  }
  else throw new EngineInputError('invalid_value', `'${variable}' has an unreadable value in row ${row + 1}`, [variable])
  if (!Number.isFinite(x)) {
    throw new EngineInputError('non_finite_input', `'${variable}' has a non-finite value (${String(x)}) in row ${row + 1}`, [variable])
  }
  return x
}

const YES = new Set(['yes', 'y', 'true', '1'])
const NO = new Set(['no', 'n', 'false', '0'])

/** 0/1 from 0/1, true/false or yes/no (any case); null when the value is none of these. */
export function toYesNo(v: unknown): 0 | 1 | null {
  if (typeof v === 'boolean') return v ? 1 : 0
  if (typeof v === 'number') return v === 1 ? 1 : v === 0 ? 0 : null
  if (typeof v === 'string') {
    const s = v.trim().toLowerCase()
    if (YES.has(s)) return 1
    if (NO.has(s)) return 0
  }
  return null
}

export function toLevel(v: unknown): string {
  return typeof v === 'string' ? v.trim() : String(v)
}
