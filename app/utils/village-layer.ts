import { colourFor } from '#shared/utils/map-palette'
import { mapClasses, mapValue, viewValueText } from './map-values'
import { VillageCanvasLayer, type VillageMark } from './village-canvas'
import type { MapMode, MapVillage } from '#shared/types/overview'

const pct = (x: number | null | undefined) => (x === null || x === undefined ? '—' : `${(x * 100).toFixed(1)} %`)

/** The hover text of a village, built as DOM nodes with textContent: village names are data, never HTML. */
export function villageTooltip(v: MapVillage): HTMLElement {
  const box = document.createElement('div')
  const name = document.createElement('strong')
  name.textContent = v.name
  box.append(name)
  const line = (text: string) => {
    const row = document.createElement('div')
    row.textContent = text
    box.append(row)
  }
  if (v.suppressed) {
    line('Too few visits to show')
    return box
  }
  const p = v.predicted
  line(`${v.visits} visits`)
  line(`Observed adoption ${pct(v.observedRate)}`)
  line(`Predicted ${pct(p?.estimate)}${p?.ciLow != null ? ` (95% CI ${pct(p.ciLow)}–${pct(p.ciHigh)})` : ''}`)
  return box
}

function boundaryRings(v: MapVillage): VillageMark['rings'] {
  const g = v.boundary
  if (!g || (g.type !== 'Polygon' && g.type !== 'MultiPolygon')) return null
  const polygons = g.type === 'Polygon' ? [g.coordinates] : g.coordinates
  return polygons.flatMap(rings => rings.map(ring => ring.map(([lon, lat]) => [lat!, lon!] as [number, number])))
}

/** What the canvas draws for each village in a view: its class colour, its size by visits, its target mark. */
export function villageMarks(villages: readonly MapVillage[], mode: MapMode): VillageMark[] {
  const { classes } = mapClasses(mode)
  let maxVisits = 1
  for (const v of villages) maxVisits = Math.max(maxVisits, v.visits ?? 0)
  return villages.map(v => ({
    lat: v.lat,
    lon: v.lon,
    radius: 5 + 10 * Math.sqrt((v.visits ?? 0) / maxVisits),
    fill: colourFor(mapValue(v, mode), classes),
    marked: v.belowVisitTarget === true,
    rings: boundaryRings(v)
  }))
}

/**
 * The villages as one canvas layer in its own pane (above the base layer's pane, so no base layer can hide them):
 * a boundary where one was uploaded, else a circle sized by visits, filled with the class colour of the view.
 */
export function villageLayer(villages: readonly MapVillage[], mode: MapMode, pane: string): VillageCanvasLayer {
  return new VillageCanvasLayer(villageMarks(villages, mode), {
    pane,
    tooltip: (i) => {
      const v = villages[i]!
      const box = villageTooltip(v)
      const extra = document.createElement('div')
      extra.textContent = [
        v.suppressed ? '' : `This view: ${viewValueText(v, mode)}`,
        v.belowVisitTarget ? 'Fewer visits than the round\'s target' : ''
      ].filter(Boolean).join(' · ')
      if (extra.textContent) box.append(extra)
      return box
    }
  })
}
