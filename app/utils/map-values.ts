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
