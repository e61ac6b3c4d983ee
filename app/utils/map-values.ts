// What the map shows for a village in each view, and its colour classes. Kept apart from the Leaflet
// drawing code so that server-rendered tables can use it without loading Leaflet.
import { ADOPTION_PALETTE, GAP_PALETTE, equalBreaks, type ClassBreaks } from '#shared/utils/map-palette'
import type { MapMode, MapVillage } from '#shared/types/overview'

export function mapValue(v: MapVillage, mode: MapMode): number | null {
  if (v.suppressed) return null
  if (mode === 'observed') return v.observedRate
  if (mode === 'gap') return v.observedRate !== null && v.predicted ? v.observedRate - v.predicted.estimate : null
  if (mode.startsWith('scenario:')) return v.scenarios[mode.slice(9)] ?? null
  return v.predicted?.estimate ?? null
}

export function mapClasses(mode: MapMode): { classes: ClassBreaks, min: number, max: number } {
  return mode === 'gap'
    ? { classes: equalBreaks(-0.35, 0.35, GAP_PALETTE), min: -0.35, max: 0.35 }
    : { classes: equalBreaks(0, 0.7, ADOPTION_PALETTE), min: 0, max: 0.7 }
}

/** The value a village shows in a view, as text: percent for shares, signed points for the gap. */
export function viewValueText(v: MapVillage, mode: MapMode): string {
  const value = mapValue(v, mode)
  if (value === null) return v.suppressed ? 'too few visits to show' : '—'
  if (mode === 'gap') return `${value >= 0 ? '+' : '−'}${Math.abs(value * 100).toFixed(1)} points`
  return `${(value * 100).toFixed(1)} %`
}

/** The heading of a view's values (legend and table column). */
export function viewTitle(mode: MapMode): string {
  if (mode === 'gap') return 'Observed − predicted (points)'
  if (mode === 'observed') return 'Observed adoption (%)'
  if (mode.startsWith('scenario:')) return `Scenario “${mode.slice(9)}” (%)`
  return 'Predicted adoption (%)'
}
