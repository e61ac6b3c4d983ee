import type { MarginalEffect } from '../stats/types'

const points = (value: number) => Math.round(value * 1000) / 10

/** Always one decimal, as in the tables and the scenario results ("6.0 points", never "6" beside "6.0"). */
function formatPoints(value: number): string {
  return Math.abs(points(value)).toFixed(1)
}

/**
 * One plain sentence for a marginal effect that is significant at 5 %, in percentage points, or null.
 * Worded as an association ("goes with"), never as a cause.
 */
export function readMarginalEffect(effect: MarginalEffect, unit?: string): string | null {
  if (effect.p === null || effect.p >= 0.05 || effect.ciLow === null || effect.ciHigh === null) return null
  const direction = effect.estimate >= 0 ? 'higher' : 'lower'
  const low = Math.min(effect.ciLow, effect.ciHigh)
  const high = Math.max(effect.ciLow, effect.ciHigh)
  const ci = effect.estimate >= 0
    ? `${points(low).toFixed(1)} to ${points(high).toFixed(1)}`
    : `${points(-high).toFixed(1)} to ${points(-low).toFixed(1)}`
  const subject = subjectOf(effect, unit)
  const amount = formatPoints(effect.estimate)
  return `${capitalise(subject)} goes with ${article(amount)} ${amount}-point ${direction} adoption probability (95% CI ${ci} points).`
}

function subjectOf(effect: MarginalEffect, unit?: string): string {
  if (effect.kind === 'discrete' && effect.level === 'yes' && effect.reference === 'no') {
    return `answering yes to “${effect.label.replace(/: yes vs no$/, '')}”`
  }
  if (effect.kind === 'discrete' && effect.level && effect.reference) {
    return `${effect.label.replace(/: .* vs .*$/, '')}: ${effect.level} rather than ${effect.reference}`
  }
  const name = effect.label.replace(/ \([^)]*\)$/, '')
  const lower = `${name.charAt(0).toLowerCase()}${name.slice(1)}`
  if (!unit) return `each one-unit increase in ${lower}`
  const one = singular(unit)
  // "Years of schooling (years)" reads "each additional year of schooling", not "year of years of schooling".
  const repeated = new RegExp(`^(${escape(unit)}|${escape(one)}) of `, 'i')
  return repeated.test(name) ? `each additional ${one} of ${name.replace(repeated, '')}` : `each additional ${one} of ${lower}`
}

/** The unit for one of it: "years" → "year", "people" → "person"; symbols (km, ha) stay as they are. */
export function singular(unit: string): string {
  const u = unit.trim()
  if (/^people$/i.test(u)) return 'person'
  if (u.length > 3 && /[^s]s$/i.test(u)) return u.slice(0, -1)
  return u
}

function escape(text: string): string {
  return text.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')
}

/** The unit a covariate's label ends with, "Farm size (ha)" → "ha"; undefined when it names none. */
export function unitOfLabel(label: string | undefined): string | undefined {
  return /\(([^)]+)\)$/.exec(label ?? '')?.[1]
}

/** "an 8-point", "an 11-point", "a 12-point": by how the number is spoken. */
function article(amount: string): string {
  return /^(8|11|18)(\.|$)/.test(amount) || /^8\d/.test(amount) ? 'an' : 'a'
}

function capitalise(text: string): string {
  return text.charAt(0).toUpperCase() + text.slice(1)
}

/** Covariate name → the unit its label names, for readings, tables and exports alike (so they never disagree). */
export function covariateUnits(covariates: ReadonlyArray<{ name: string, label?: string }>): Record<string, string | undefined> {
  return Object.fromEntries(covariates.map(c => [c.name, unitOfLabel(c.label)]))
}

/** How sure an estimate is, in the words and marks the results pages and the report use, with their key. */
export const CERTAINTY_LEVELS = [
  { mark: '●●', words: 'clear', rule: 'p < 0.01', meaning: 'a pattern this strong would turn up by chance less than once in 100 samples' },
  { mark: '●', words: 'likely', rule: 'p < 0.05', meaning: 'by chance less than once in 20 samples' },
  { mark: '', words: 'could be chance', rule: 'p ≥ 0.05', meaning: 'the range includes no association at all' }
] as const

export function certaintyOf(p: number | null | undefined): typeof CERTAINTY_LEVELS[number] | null {
  if (p === null || p === undefined || !Number.isFinite(p)) return null
  return p < 0.01 ? CERTAINTY_LEVELS[0] : p < 0.05 ? CERTAINTY_LEVELS[1] : CERTAINTY_LEVELS[2]
}
