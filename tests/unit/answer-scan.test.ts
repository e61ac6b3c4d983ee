import { describe, expect, it } from 'vitest'
import { ScanMemo, parseJsonNumber, scanAnswers, type ScannedValue } from '../../server/utils/answer-scan'

// The reference: what MariaDB's JSON_VALUE gave the loader before (a scalar's text, a string unescaped, null for
// JSON null, objects and absent keys), with arrays parsed for several-answer questions.
function reference(text: string, keys: string[]): ScannedValue[] {
  const doc = JSON.parse(text) as Record<string, unknown>
  return keys.map((k) => {
    if (!Object.prototype.hasOwnProperty.call(doc, k)) return null
    const v = doc[k]
    if (v === null || (typeof v === 'object' && !Array.isArray(v))) return null
    if (Array.isArray(v)) return v
    return typeof v === 'string' ? v : String(v)
  })
}

function scan(text: string, keys: string[]): ScannedValue[] {
  const out: ScannedValue[] = Array.from({ length: keys.length }, () => 'stale')
  scanAnswers(text, new Map(keys.map((k, i) => [k, i])), out)
  return out
}

// A small deterministic generator (mulberry32), so a failure names a reproducible case.
function rng(seed: number) {
  return () => {
    seed = (seed + 0x6D2B79F5) | 0
    let t = Math.imul(seed ^ (seed >>> 15), 1 | seed)
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

describe('scanAnswers', () => {
  it('reads numbers, yes/no, text with escapes, null, lists and skips nested rows and objects', () => {
    const text = JSON.stringify({
      plots: [{ row: 'a', x1: 99, note: 'x1": 5' }, { x1: { deep: [1, 2] } }],
      x1: 0.25,
      adopted: true,
      note: 'He said "x2": 7 \\ and left, {ok} [fine]',
      x2: -1.5e-7,
      unanswered: null,
      heard: ['radio', 'neighbour'],
      extra: { x3: 4 },
      x3: 12
    })
    expect(scan(text, ['x1', 'adopted', 'note', 'x2', 'unanswered', 'heard', 'extra', 'x3', 'absent']))
      .toEqual(['0.25', 'true', 'He said "x2": 7 \\ and left, {ok} [fine]', '-1.5e-7', null, ['radio', 'neighbour'], null, '12', null])
  })

  it('reads the spaced form MariaDB writes and a null document', () => {
    expect(scan('{"x1": 0.5, "adopted": false, "c": "plain"}', ['c', 'x1', 'adopted'])).toEqual(['plain', '0.5', 'false'])
    expect(scan('{}', ['x1'])).toEqual([null])
    const out: ScannedValue[] = ['stale']
    scanAnswers(null, new Map([['x1', 0]]), out)
    expect(out).toEqual([null])
  })

  it('agrees with JSON.parse on 2,000 random documents', () => {
    const next = rng(20261202)
    const pick = <T>(xs: T[]) => xs[Math.floor(next() * xs.length)]!
    const strings = ['', 'a', 'x1', '"x1":', 'tab\tnew\nline', 'ünïcødé ✓', '\\', '{', ']', ',', 'quote " and \\" mix']
    const value = (depth: number): unknown => {
      const r = next()
      if (r < 0.25) return Math.round((next() - 0.5) * 1e6) / 1e3
      if (r < 0.35) return next() < 0.5
      if (r < 0.45) return null
      if (r < 0.7) return pick(strings) + pick(strings)
      if (r < 0.85 || depth > 2) return Array.from({ length: Math.floor(next() * 4) }, () => pick(strings))
      return Object.fromEntries(Array.from({ length: Math.floor(next() * 3) }, (_, i) => [pick(['x1', 'x2', 'k']) + i, value(depth + 1)]))
    }
    const keys = ['x1', 'x2', 'x3', 'adopted', 'k0']
    // One memo across all rows, as the loader keeps it: keys in another order than the last row's, or keys that
    // begin with the last row's key (x1 after x10), must still be read as themselves.
    const wanted = new Map(keys.map((k, i) => [k, i]))
    const memo = new ScanMemo(keys.length)
    for (let i = 0; i < 2000; i++) {
      const doc = Object.fromEntries(Array.from({ length: Math.floor(next() * 8) }, () => [pick([...keys, 'x10', 'x', 'other', 'rows']), value(0)]))
      const text = next() < 0.5 ? JSON.stringify(doc) : JSON.stringify(doc, null, next() < 0.5 ? 1 : '\t')
      expect(scan(text, keys), text).toEqual(reference(text, keys))
      const out: ScannedValue[] = keys.map(() => 'stale')
      scanAnswers(text, wanted, out, memo)
      expect(out, text).toEqual(reference(text, keys))
      keys.forEach((k, j) => {
        const at = memo.starts[j]!
        expect(at >= 0, `${k} in ${text}`).toBe(Object.prototype.hasOwnProperty.call(doc, k))
        if (typeof doc[k] === 'number') expect(parseJsonNumber(text, at)).toBe(doc[k])
      })
    }
  })
})

describe('parseJsonNumber', () => {
  const read = (text: string) => parseJsonNumber(`{"x":${text}}`, 5)

  it('gives what Number() gives, on the fast path and off it', () => {
    const cases = ['0', '-0', '-0.0', '1', '12', '0.1', '0.25', '-1.5e-7', '1E5', '2e+3', '123456789012345', '1234567890123456789',
      '0.1000000000000000055511151231257827', '9007199254740993', '1e22', '1e23', '1e-22', '1e-23', '4.9e-324', '1.7976931348623157e308',
      '2e308', '0.000001234', '-98.76543210', '5e-1', '100000000000000000000000']
    for (const text of cases) expect(Object.is(read(text), Number(text)), text).toBe(true)
  })

  it('agrees with Number() on 100,000 random decimals', () => {
    const next = rng(7)
    for (let i = 0; i < 100_000; i++) {
      const digits = 1 + Math.floor(next() * 18)
      let mantissa = ''
      for (let d = 0; d < digits; d++) mantissa += String(Math.floor(next() * 10))
      const point = Math.floor(next() * (digits + 1))
      let text = (next() < 0.3 ? '-' : '') + (point === 0 ? '0' : mantissa.slice(0, point).replace(/^0+(?=\d)/, '')) + (point < digits ? `.${mantissa.slice(point)}` : '')
      if (next() < 0.3) text += `e${Math.floor(next() * 60) - 30}`
      expect(read(text), text).toBe(Number(text))
    }
  })
})
