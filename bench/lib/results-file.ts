// bench/results.json: one entry per measurement, merged by name and size so every benchmark can
// update its own entries without touching the others'.
import { existsSync, readFileSync, writeFileSync } from 'node:fs'
import { loadavg } from 'node:os'
import { dirname, join } from 'node:path'
import { fileURLToPath } from 'node:url'

export interface BenchEntry {
  name: string
  n: number
  ours_ms: number
  peer: string
  peer_ms: number | null
  ratio: number | null
  peak_rss_mb: number | null
  /** Figures that do not fit the ours/peer pair (latency percentiles, error counts). */
  details?: Record<string, number | string>
}

const RESULTS = join(dirname(fileURLToPath(import.meta.url)), '..', 'results.json')

export function mergeResults(entries: BenchEntry[]): void {
  let existing: BenchEntry[] = []
  if (existsSync(RESULTS)) {
    try {
      existing = JSON.parse(readFileSync(RESULTS, 'utf8')) as BenchEntry[]
    }
    catch {
      existing = []
    }
  }
  const key = (e: { name: string, n: number }): string => `${e.name}@${e.n}`
  const fresh = new Set(entries.map(key))
  const merged = [...existing.filter(e => !fresh.has(key(e))), ...entries]
  writeFileSync(RESULTS, `${JSON.stringify(merged, null, 2)}\n`)
  console.log(`results written to bench/results.json (${entries.length} entries updated)`)
}

export function round(x: number, digits = 1): number {
  const f = 10 ** digits
  return Math.round(x * f) / f
}

export function printTable(head: string[], rows: string[][]): void {
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map(r => r[i]!.length)))
  const fmt = (r: string[]): string => r.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ')
  console.log(fmt(head))
  for (const r of rows) console.log(fmt(r))
}

/**
 * The 1-minute load average, printed and stored beside every figure: on a shared machine it inflates wall times
 * (ours and the peer's alike, so a ratio measured in one run is steadier than either figure).
 */
export function loadAverage(): number {
  return round(loadavg()[0]!, 2)
}
