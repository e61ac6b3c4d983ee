// Number formatting for model results: fixed, readable, and never "NaN" on screen.

export function num(value: number | null | undefined, digits = 3): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—'
  return value.toFixed(digits)
}

/** A probability or share as percentage points: 0.123 → "12.3". */
export function pts(value: number | null | undefined, digits = 1): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—'
  return (value * 100).toFixed(digits)
}

export function pValue(p: number | null | undefined): string {
  if (p === null || p === undefined || !Number.isFinite(p)) return '—'
  return p < 0.001 ? '< 0.001' : p.toFixed(3)
}

export function stars(p: number | null | undefined): string {
  if (p === null || p === undefined) return ''
  return p < 0.01 ? '●●' : p < 0.05 ? '●' : ''
}

/** How the standard errors of a run were computed, in words. */
export function seLabelOf(type: string | undefined): string {
  return ({ 'cluster': 'clustered by village', 'conventional': 'conventional', 'hc0': 'robust (HC0)', 'hc1': 'robust (HC1)', 'survey': 'from the sampling plan', 'random-intercept': 'with a level per village', 'farm-effects': 'with a level per farm' } as Record<string, string>)[type ?? ''] ?? ''
}

/** A day as "2 Dec 2026", in UTC and one fixed locale so the server's render and the browser's agree. */
export function dayOf(iso: string | null | undefined): string {
  if (!iso) return '—'
  return new Date(iso).toLocaleDateString('en-GB', { day: 'numeric', month: 'short', year: 'numeric', timeZone: 'UTC' })
}

/** A whole number with thousands separators, the same on server and browser: 1505 → "1,505". */
export function wholeNumber(value: number | null | undefined): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—'
  return Math.round(value).toLocaleString('en-GB')
}

/**
 * A moment as "2 Dec 2026, 14:05 UTC": one locale and UTC, so a server-rendered page and the browser that takes it
 * over write the same text (the browser's own time zone or language would be a hydration mismatch).
 */
export function momentOf(iso: string | Date | null | undefined): string {
  if (!iso) return '—'
  const at = new Date(iso)
  if (Number.isNaN(at.getTime())) return '—'
  return `${at.toLocaleString('en-GB', { day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit', hourCycle: 'h23', timeZone: 'UTC' })} UTC`
}

/** A time of day as "14:05 UTC", for the same reason. */
export function clockOf(iso: string | null | undefined): string {
  if (!iso) return ''
  return `${new Date(iso).toLocaleTimeString('en-GB', { hour: '2-digit', minute: '2-digit', hourCycle: 'h23', timeZone: 'UTC' })} UTC`
}

// As the rest of the app writes them through Intl's en-GB (which writes "Sept").
const MONTHS = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sept', 'Oct', 'Nov', 'Dec']

/**
 * A moment in the tablet's own time zone as "2 Dec 2026, 14:05", for the field app's screens. Built from the date's
 * own getters rather than Intl: a page's first Intl date formatting sets up the browser's locale and time-zone data,
 * 30–60 ms measured in Chromium here, and on the tablet that landed in the enumerator's first tick of the consent box.
 * With `seconds` ("…, 14:05:09") where a person checks that something just happened again (the last sync).
 */
export function localMomentOf(iso: string | null | undefined, { seconds = false } = {}): string {
  if (!iso) return '—'
  const at = new Date(iso)
  if (Number.isNaN(at.getTime())) return '—'
  const two = (n: number) => String(n).padStart(2, '0')
  return `${at.getDate()} ${MONTHS[at.getMonth()]} ${at.getFullYear()}, ${two(at.getHours())}:${two(at.getMinutes())}${seconds ? `:${two(at.getSeconds())}` : ''}`
}
