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
  const literal = text.slice(start, end)
  return literal === 'null' ? null : literal
}

/**
 * Fills `out[i]` with the value of the top-level key `wanted.get(key) === i` (null where absent). Keys of nested
 * objects (a repeated group's rows) are never matched: only the outer object's own keys are looked at.
 */
export function scanAnswers(text: string | null, wanted: ReadonlyMap<string, number>, out: ScannedValue[]): void {
  out.fill(null)
  if (text === null) return
  let p = 0
  while (p < text.length && isSpace(text.charCodeAt(p))) p++
  if (text.charCodeAt(p) !== OPEN_BRACE) return
  p++
  let found = 0
  while (p < text.length && found < wanted.size) {
    let c = text.charCodeAt(p)
    while (isSpace(c) || c === COMMA) c = text.charCodeAt(++p)
    if (c === CLOSE_BRACE || p >= text.length) return
    const keyEnd = skipString(text, p)
    const rawKey = text.slice(p + 1, keyEnd - 1)
    // Question keys are plain [a-z0-9_]; a key with an escape is never one of them.
    const slot = rawKey.includes('\\') ? undefined : wanted.get(rawKey)
    p = keyEnd
    while (isSpace(text.charCodeAt(p))) p++
    if (text.charCodeAt(p) !== COLON) throw new Error('malformed stored answers')
    p++
    while (isSpace(text.charCodeAt(p))) p++
    const end = skipValue(text, p)
    if (slot !== undefined) {
      out[slot] = valueOf(text, p, end)
      found++
    }
    p = end
  }
}
