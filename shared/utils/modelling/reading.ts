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
  const subject = effect.kind === 'discrete'
    ? (effect.level && effect.reference && effect.level !== '1'
        ? `${effect.label.split(':')[0]}: ${effect.level} rather than ${effect.reference}`
        : effect.label)
    : `each additional ${unit ?? 'unit'} of ${effect.label}`
  return `${capitalise(subject)} goes with a ${formatPoints(effect.estimate)}-point ${direction} adoption probability (95% CI ${ci} points).`
}

function capitalise(text: string): string {
  return text.charAt(0).toUpperCase() + text.slice(1)
}
