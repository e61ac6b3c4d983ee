import type { MarginalEffect } from '../stats/types'

const points = (value: number) => Math.round(value * 1000) / 10

function formatPoints(value: number): string {
  const p = points(value)
  return Number.isInteger(p) ? String(Math.abs(p)) : Math.abs(p).toFixed(1)
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
    ? `${points(low)} to ${points(high)}`
    : `${points(-high)} to ${points(-low)}`
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
  return `each additional ${unit ?? 'unit'} of ${name.charAt(0).toLowerCase()}${name.slice(1)}`
}

/** "an 8-point", "an 11-point", "a 12-point": by how the number is spoken. */
function article(amount: string): string {
  return /^(8|11|18)(\.|$)/.test(amount) || /^8\d/.test(amount) ? 'an' : 'a'
}

function capitalise(text: string): string {
  return text.charAt(0).toUpperCase() + text.slice(1)
}
