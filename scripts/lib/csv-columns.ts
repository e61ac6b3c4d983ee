/**
 * A streaming CSV reader for `npm run fit`: the file is read in chunks and every cell goes straight into its
 * column — numbers into a growing Float64Array, text into a sparse list — with no per-row objects and no
 * string per numeric cell. Hand-written because a million-row file through a general parser (strings for
 * every cell, then Number()) costs several times the fit itself.
 *
 * Numbers are decimal notation only: an optional sign, digits with at most one decimal separator (the declared
 * one, '.' by default), and an optional exponent (1e3, 2.5E-4 — scientific notation is how statistics programs
 * write very small and large values). Anything else (0x1A, 0b11, 1_000, Infinity, NaN, 3,5 with a '.' separator)
 * is text; a numeric column with a text cell is refused by the caller, naming the line. An empty cell or NA is
 * missing.
 *
 * Digits are converted exactly: a mantissa below 2^53 scaled by a power of ten up to 10^22 is one correctly
 * rounded operation (both operands are exact doubles); other numbers go through Number() on the cell's text.
 */
import { closeSync, fstatSync, openSync, readSync } from 'node:fs'

export class CsvError extends Error {}

const SEPARATORS: Array<[number, string]> = [[0x2C, 'comma'], [0x3B, 'semicolon'], [0x09, 'tab'], [0x7C, 'vertical bar']]
const POW10 = Array.from({ length: 23 }, (_, i) => 10 ** i)
const CHUNK = 1 << 24

export interface CsvColumn {
  name: string
  /** Numeric value of each row (NaN where the cell is missing or text). */
  values: Float64Array
  /** Rows whose cell is missing (empty or NA). */
  missing: number
  /** Text cells by row (cells that are not decimal numbers), or null when there are none. */
  text: Map<number, string> | null
}

export interface CsvTable {
  columns: CsvColumn[]
  rows: number
  separator: string
  /** File line of each data row is `lineOfRow[r]` (the header is line 1). */
  lineOfRow: (row: number) => number
}

export interface CsvOptions {
  /** Field separator; detected from the header line (comma, semicolon, tab, vertical bar) when not given. */
  separator?: string
  /** Decimal separator of numeric cells: '.' (default) or ','. */
  decimal?: string
}

/** Name of a separator for messages. */
export function separatorLabel(sep: string): string {
  return SEPARATORS.find(([c]) => c === sep.charCodeAt(0))?.[1] ?? `'${sep}'`
}

function detectSeparator(headerLine: string): number {
  let best = -1
  let bestCount = 0
  for (const [c] of SEPARATORS) {
    let count = 0
    let quoted = false
    for (let i = 0; i < headerLine.length; i++) {
      const ch = headerLine.charCodeAt(i)
      if (ch === 0x22) quoted = !quoted
      else if (!quoted && ch === c) count++
    }
    if (count > bestCount) {
      best = c
      bestCount = count
    }
  }
  return best < 0 ? 0x2C : best
}

/** One decimal number in bytes [a, b) (already trimmed), or NaN when the cell is not decimal notation. */
function parseNumber(buf: Uint8Array, a: number, b: number, decimal: number): number {
  let i = a
  let neg = false
  const c0 = buf[i]
  if (c0 === 0x2D || c0 === 0x2B) {
    neg = c0 === 0x2D
    i++
  }
  let mant = 0
  let digits = 0
  let fracDigits = 0
  let big = false
  let seenPoint = false
  for (; i < b; i++) {
    const c = buf[i]!
    if (c >= 0x30 && c <= 0x39) {
      if (mant < 9007199254740992 / 10 - 1) mant = mant * 10 + (c - 0x30)
      else big = true
      digits++
      if (seenPoint) fracDigits++
    }
    else if (c === decimal && !seenPoint) seenPoint = true
    else break
  }
  if (digits === 0) return Number.NaN
  let exp = 0
  if (i < b) {
    const c = buf[i]
    if (c !== 0x65 && c !== 0x45) return Number.NaN
    i++
    let eneg = false
    if (buf[i] === 0x2D || buf[i] === 0x2B) {
      eneg = buf[i] === 0x2D
      i++
    }
    let ed = 0
    for (; i < b; i++) {
      const d = buf[i]!
      if (d < 0x30 || d > 0x39) return Number.NaN
      exp = exp * 10 + (d - 0x30)
      if (++ed > 6) return Number.NaN
    }
    if (ed === 0) return Number.NaN
    if (eneg) exp = -exp
  }
  const p = exp - fracDigits
  let v: number
  if (!big && p >= -22 && p <= 22) v = p < 0 ? mant / POW10[-p]! : mant * POW10[p]!
  else {
    // Rare: more than 15 significant digits or a large exponent; let the runtime round it.
    let s = Buffer.from(buf.buffer, buf.byteOffset + a, b - a).toString('latin1')
    if (decimal !== 0x2E) s = s.replace(String.fromCharCode(decimal), '.')
    v = Math.abs(Number(s))
  }
  return neg ? -v : v
}

class ColumnBuilder {
  values: Float64Array
  missing = 0
  text: Map<number, string> | null = null
  constructor(readonly name: string, capacity: number) {
    this.values = new Float64Array(capacity)
  }

  grow(): void {
    const next = new Float64Array(this.values.length * 2)
    next.set(this.values)
    this.values = next
  }
}

/** Reads a whole CSV file into columns, chunk by chunk. */
export function readCsvColumns(path: string, options: CsvOptions = {}): CsvTable {
  let fd: number
  try {
    fd = openSync(path, 'r')
  }
  catch {
    throw new CsvError(`cannot read '${path}'`)
  }
  try {
    return readFrom(fd, options)
  }
  finally {
    closeSync(fd)
  }
}

function readFrom(fd: number, options: CsvOptions): CsvTable {
  const decimal = (options.decimal ?? '.').charCodeAt(0)
  if (options.decimal !== undefined && options.decimal !== '.' && options.decimal !== ',') throw new CsvError(`--decimal must be '.' or ',' (got '${options.decimal}')`)
  let buf: Uint8Array = new Uint8Array(CHUNK)
  let len = 0
  let eof = false
  const fill = (): void => {
    if (len === buf.length) {
      const bigger = new Uint8Array(buf.length * 2)
      bigger.set(buf)
      buf = bigger
    }
    const got = readSync(fd, buf, len, buf.length - len, null)
    if (got === 0) eof = true
    len += got
  }
  fill()
  let pos = 0
  if (buf[0] === 0xEF && buf[1] === 0xBB && buf[2] === 0xBF) pos = 3

  // The header line (may be quoted).
  let headerEnd = pos
  for (;;) {
    while (headerEnd < len && buf[headerEnd] !== 0x0A) headerEnd++
    if (headerEnd < len || eof) break
    fill()
  }
  const headerLine = Buffer.from(buf.buffer, buf.byteOffset + pos, headerEnd - pos).toString('utf8').replace(/\r$/, '')
  const sep = options.separator !== undefined ? options.separator.charCodeAt(0) : detectSeparator(headerLine)
  if (options.separator !== undefined && options.separator.length !== 1) throw new CsvError('--separator must be one character')
  if (sep === decimal) throw new CsvError(`the decimal separator cannot also separate the columns (${separatorLabel(String.fromCharCode(sep))}); pass --separator`)
  const header = splitQuoted(headerLine, String.fromCharCode(sep))
  if (!header.length || (header.length === 1 && header[0] === '')) throw new CsvError('the file is empty')
  const seen = new Map<string, number>()
  header.forEach((h, j) => {
    if (h === '') return
    const first = seen.get(h)
    if (first !== undefined) throw new CsvError(`the header names column '${h}' twice (columns ${first + 1} and ${j + 1}); give every column its own name`)
    seen.set(h, j)
  })
  const ncol = header.length
  // Rows expected: the file's size over the length of the lines in the first chunk, plus a margin.
  let newlines = 0
  for (let i = headerEnd + 1; i < len; i++) if (buf[i] === 0x0A) newlines++
  const perLine = newlines > 0 ? (len - headerEnd) / newlines : 64
  const estimate = Math.max(1024, Math.ceil((fstatSync(fd).size / perLine) * 1.05) + 16)
  const cols = header.map(h => new ColumnBuilder(h, estimate))
  pos = headerEnd + 1

  let rows = 0
  let line = 1
  // Line number of rows after a blank line or a quoted newline, when they differ from rows + 2.
  const lineJumps: Array<[number, number]> = []
  let expectedLine = 2
  for (;;) {
    // Make sure a whole line is in the buffer (or the file has ended).
    let end = pos
    let quoted = false
    for (;;) {
      while (end < len) {
        const c = buf[end]!
        if (c === 0x22) quoted = !quoted
        else if (c === 0x0A && !quoted) break
        end++
      }
      if (end < len || eof) break
      // Move the partial line to the front and read more.
      if (pos > 0) {
        buf.copyWithin(0, pos, len)
        len -= pos
        end -= pos
        pos = 0
      }
      fill()
    }
    if (pos >= len && eof) break
    line++
    let lineEnd = end
    if (lineEnd > pos && buf[lineEnd - 1] === 0x0D) lineEnd--
    if (quoted && end >= len) throw new CsvError(`line ${line} ends inside a quoted field`)
    if (lineEnd === pos) {
      // A blank line: skipped.
      pos = end + 1
      continue
    }
    if (rows === cols[0]!.values.length) for (const c of cols) c.grow()
    if (line !== expectedLine) lineJumps.push([rows, line])
    expectedLine = line + 1
    let j = 0
    let a = pos
    while (a <= lineEnd) {
      let b = a
      let cell: string | null = null
      if (buf[a] === 0x22) {
        // Quoted field: slow path through a string.
        let s = ''
        let i = a + 1
        let start = i
        for (; i < lineEnd; i++) {
          if (buf[i] === 0x22) {
            s += Buffer.from(buf.buffer, buf.byteOffset + start, i - start).toString('utf8')
            if (buf[i + 1] === 0x22) {
              s += '"'
              i++
              start = i + 1
            }
            else {
              i++
              break
            }
          }
        }
        b = i
        while (b < lineEnd && buf[b] !== sep) b++
        cell = s
        for (const ch of s) if (ch === '\n') line++
      }
      else {
        while (b < lineEnd && buf[b] !== sep) b++
      }
      if (j >= ncol) throw new CsvError(`line ${line} has more fields than the header's ${ncol}`)
      storeCell(cols[j]!, rows, buf, a, b, cell, decimal)
      j++
      a = b + 1
      if (b === lineEnd) break
    }
    if (j !== ncol) throw new CsvError(`line ${line} has ${j} fields, the header has ${ncol}`)
    rows++
    pos = end + 1
    if (end >= len && eof) break
  }
  if (rows === 0) throw new CsvError('the file has no data rows')
  const columns: CsvColumn[] = cols.map(c => ({ name: c.name, values: c.values.subarray(0, rows), missing: c.missing, text: c.text }))
  const lineOfRow = (row: number): number => {
    let best: [number, number] | null = null
    for (const jmp of lineJumps) if (jmp[0] <= row) best = jmp
    return best ? best[1] + (row - best[0]) : row + 2
  }
  return { columns, rows, separator: String.fromCharCode(sep), lineOfRow }
}

function storeCell(col: ColumnBuilder, row: number, buf: Uint8Array, a: number, b: number, quotedText: string | null, decimal: number): void {
  if (quotedText !== null) {
    const s = quotedText.trim()
    if (s === '' || s === 'NA') {
      col.values[row] = Number.NaN
      col.missing++
      return
    }
    const bytes = Buffer.from(s, 'utf8')
    const v = parseNumber(bytes, 0, bytes.length, decimal)
    col.values[row] = v
    if (Number.isNaN(v)) (col.text ??= new Map()).set(row, s)
    return
  }
  while (a < b && (buf[a] === 0x20 || buf[a] === 0x09)) a++
  while (b > a && (buf[b - 1] === 0x20 || buf[b - 1] === 0x09)) b--
  if (a === b || (b - a === 2 && buf[a] === 0x4E && buf[a + 1] === 0x41)) {
    col.values[row] = Number.NaN
    col.missing++
    return
  }
  const v = parseNumber(buf, a, b, decimal)
  col.values[row] = v
  if (Number.isNaN(v)) (col.text ??= new Map()).set(row, Buffer.from(buf.buffer, buf.byteOffset + a, b - a).toString('utf8'))
}

/** Splits one line with double-quoted fields. */
function splitQuoted(line: string, sep: string): string[] {
  const out: string[] = []
  let cur = ''
  let quoted = false
  for (let i = 0; i < line.length; i++) {
    const ch = line[i]!
    if (quoted) {
      if (ch === '"') {
        if (line[i + 1] === '"') {
          cur += '"'
          i++
        }
        else quoted = false
      }
      else cur += ch
    }
    else if (ch === '"') quoted = true
    else if (ch === sep) {
      out.push(cur.trim())
      cur = ''
    }
    else cur += ch
  }
  out.push(cur.trim())
  return out
}
