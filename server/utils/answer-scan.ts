/**
 * Reads the top-level answers a model needs out of a visit's stored answers (JSON text), in one pass over the text.
 *
 * Why our own scanner rather than MariaDB's JSON_VALUE or JSON.parse: the model loader reads every accepted visit of
 * a round (10⁶ rows in the bench). Measured on this 2-core machine (loaded, 10⁵ rows of 10 numbers): ten
 * JSON_VALUE per row in the query took 5.7 s (MariaDB parses the document once per call), JSON_TABLE 3.2 s, the raw
 * text alone 1.0 s; in Node, JSON.parse of every row cost twice what this scan does, and builds an object per visit
 * that the loader throws away. The text comes from a JSON column (MariaDB checks it is valid JSON on write), so the
 * scanner may assume valid JSON; it still refuses to read past the end.
 *
 * What a value becomes is what JSON_VALUE gave before, so the loader's results did not change: a number's own text,
 * 'true'/'false', a string unescaped, null for JSON null; an array is returned parsed (several-answer questions);
 * an object is null.
 */
export type ScannedValue = string | null | unknown[]

const QUOTE = 34
const BACKSLASH = 92
const OPEN_BRACE = 123
const CLOSE_BRACE = 125
const OPEN_BRACKET = 91
const CLOSE_BRACKET = 93
const COMMA = 44
const COLON = 58

function isSpace(c: number): boolean {
  return c === 32 || c === 10 || c === 13 || c === 9
}

/** The index just past the string that opens at `at` (a quote). */
function skipString(text: string, at: number): number {
  let p = at + 1
  while (p < text.length) {
    const c = text.charCodeAt(p)
    if (c === BACKSLASH) p += 2
    else if (c === QUOTE) return p + 1
    else p++
  }
  throw new Error('unterminated string in stored answers')
}

/** The index just past the value that starts at `at` (any JSON value). */
function skipValue(text: string, at: number): number {
  const c = text.charCodeAt(at)
  if (c === QUOTE) return skipString(text, at)
  if (c === OPEN_BRACE || c === OPEN_BRACKET) {
    let depth = 0
    let p = at
    while (p < text.length) {
      const d = text.charCodeAt(p)
      if (d === QUOTE) {
        p = skipString(text, p)
        continue
      }
      if (d === OPEN_BRACE || d === OPEN_BRACKET) depth++
      else if (d === CLOSE_BRACE || d === CLOSE_BRACKET) {
        depth--
        if (depth === 0) return p + 1
      }
      p++
    }
    throw new Error('unterminated container in stored answers')
  }
  // A number, true, false or null: up to the next delimiter.
  let p = at
  while (p < text.length) {
    const d = text.charCodeAt(p)
    if (d === COMMA || d === CLOSE_BRACE || d === CLOSE_BRACKET || isSpace(d)) break
    p++
  }
  return p
}

function valueOf(text: string, start: number, end: number): ScannedValue {
  const c = text.charCodeAt(start)
  if (c === QUOTE) {
    const inner = text.slice(start + 1, end - 1)
    return inner.includes('\\') ? JSON.parse(text.slice(start, end)) as string : inner
  }
  if (c === OPEN_BRACKET) return JSON.parse(text.slice(start, end)) as unknown[]
  if (c === OPEN_BRACE) return null
  // Valid JSON: a value opening with n, t or f is null, true or false (no text cut out for them).
  if (c === 110) return null
  if (c === 116) return 'true'
  if (c === 102) return 'false'
  return text.slice(start, end)
}

/**
 * What a scan of one row leaves for the next: the keys in the order the last row had them (rows written by the same
 * questionnaire keep one order, so a key is recognised by comparing text in place, without cutting it out and looking
 * it up), and where each wanted value starts in the text (-1 when absent), for `parseJsonNumber`.
 */
export class ScanMemo {
  readonly order: string[] = []
  /** The wanted slot of the key at each position of `order` (-1: not wanted), so a recognised key is not looked up. */
  readonly slots: number[] = []
  readonly starts: Int32Array
  constructor(wanted: number) {
    this.starts = new Int32Array(wanted)
  }
}

/**
 * Fills `out[i]` with the value of the top-level key `wanted.get(key) === i` (null where absent). Keys of nested
 * objects (a repeated group's rows) are never matched: only the outer object's own keys are looked at.
 */
export function scanAnswers(text: string | null, wanted: ReadonlyMap<string, number>, out: ScannedValue[], memo?: ScanMemo): void {
  out.fill(null)
  memo?.starts.fill(-1)
  if (text === null) return
  let p = 0
  while (p < text.length && isSpace(text.charCodeAt(p))) p++
  if (text.charCodeAt(p) !== OPEN_BRACE) return
  p++
  let found = 0
  let index = 0
  while (p < text.length && found < wanted.size) {
    let c = text.charCodeAt(p)
    while (isSpace(c) || c === COMMA) c = text.charCodeAt(++p)
    if (c === CLOSE_BRACE || p >= text.length) return
    // The key the last row had here, if this row has it too (its closing quote right after it).
    const guess = memo?.order[index]
    let slot: number | undefined
    if (guess !== undefined && text.charCodeAt(p + 1 + guess.length) === QUOTE && text.startsWith(guess, p + 1)) {
      const known = memo!.slots[index]!
      slot = known < 0 ? undefined : known
      p += guess.length + 2
    }
    else {
      const keyEnd = skipString(text, p)
      const key = text.slice(p + 1, keyEnd - 1)
      // Question keys are plain [a-z0-9_]; a key with an escape is never one of them.
      slot = key.includes('\\') ? undefined : wanted.get(key)
      if (memo) {
        memo.order[index] = key
        memo.slots[index] = slot ?? -1
      }
      p = keyEnd
    }
    index++
    while (isSpace(text.charCodeAt(p))) p++
    if (text.charCodeAt(p) !== COLON) throw new Error('malformed stored answers')
    p++
    while (isSpace(text.charCodeAt(p))) p++
    const end = skipValue(text, p)
    if (slot !== undefined) {
      out[slot] = valueOf(text, p, end)
      if (memo) memo.starts[slot] = p
      found++
    }
    p = end
  }
}

const POWERS_OF_TEN = Array.from({ length: 23 }, (_, i) => 10 ** i)

/**
 * The number written in `text` from `start` (a JSON number up to the next delimiter), exactly as Number() reads it,
 * without cutting the text out. Why: the model loader reads ten or more numbers per visit, and Number() of a cut-out
 * string was its largest single cost (45 ms per 10^5 visits of ten answers). The fast path is Clinger's: when the
 * digits form an integer m below 2^53 and the decimal exponent e is within ±22, both m and 10^|e| are exact doubles
 * and one IEEE multiplication or division rounds correctly, which is what Number() returns. Anything else (more
 * digits, larger exponents, or not a JSON number at all) is handed to Number().
 */
export function parseJsonNumber(text: string, start: number): number {
  let p = start
  let negative = false
  if (text.charCodeAt(p) === 45) {
    negative = true
    p++
  }
  let mantissa = 0
  let digits = 0
  let scale = 0
  let c = text.charCodeAt(p)
  if (!(c >= 48 && c <= 57)) return slowNumber(text, start)
  while (c >= 48 && c <= 57) {
    mantissa = mantissa * 10 + (c - 48)
    if (mantissa !== 0) digits++
    c = text.charCodeAt(++p)
  }
  if (c === 46) {
    c = text.charCodeAt(++p)
    if (!(c >= 48 && c <= 57)) return slowNumber(text, start)
    while (c >= 48 && c <= 57) {
      mantissa = mantissa * 10 + (c - 48)
      if (mantissa !== 0) digits++
      scale--
      c = text.charCodeAt(++p)
    }
  }
  if (c === 101 || c === 69) {
    c = text.charCodeAt(++p)
    let expNegative = false
    if (c === 43 || c === 45) {
      expNegative = c === 45
      c = text.charCodeAt(++p)
    }
    if (!(c >= 48 && c <= 57)) return slowNumber(text, start)
    let exponent = 0
    while (c >= 48 && c <= 57 && exponent < 10_000) {
      exponent = exponent * 10 + (c - 48)
      c = text.charCodeAt(++p)
    }
    scale += expNegative ? -exponent : exponent
  }
  if (!Number.isNaN(c) && !(c === COMMA || c === CLOSE_BRACE || c === CLOSE_BRACKET || isSpace(c))) return slowNumber(text, start)
  if (digits > 15 || scale < -22 || scale > 22) return slowNumber(text, start)
  const value = scale < 0 ? mantissa / POWERS_OF_TEN[-scale]! : mantissa * POWERS_OF_TEN[scale]!
  return negative ? -value : value
}

function slowNumber(text: string, start: number): number {
  return Number(text.slice(start, skipValue(text, start)))
}
