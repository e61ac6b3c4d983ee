import { readFileSync } from 'node:fs'
import { fileURLToPath } from 'node:url'

export const FIXTURES = fileURLToPath(new URL('../../fixtures/', import.meta.url))

/** Minimal CSV reader for the fixtures (double-quoted fields, no embedded newlines). */
export function readCsv(path: string): Array<Record<string, string>> {
  const lines = readFileSync(path, 'utf8').trim().split('\n')
  const split = (line: string): string[] => {
    const out: string[] = []
    let cur = ''
    let q = false
    for (const ch of line) {
      if (ch === '"') q = !q
      else if (ch === ',' && !q) {
        out.push(cur)
        cur = ''
      }
      else cur += ch
    }
    out.push(cur)
    return out
  }
  const head = split(lines[0]!)
  return lines.slice(1).map((l) => {
    const f = split(l)
    const r: Record<string, string> = {}
    head.forEach((h, i) => {
      r[h] = f[i]!
    })
    return r
  })
}

/** |actual − expected| ≤ tol · max(|expected|, floor). */
export function relErr(actual: number, expected: number, floor = 1e-300): number {
  return Math.abs(actual - expected) / Math.max(Math.abs(expected), floor)
}
