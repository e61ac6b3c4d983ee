import { colourFor } from '#shared/utils/map-palette'
import { mapClasses, mapValue, viewValueText } from './map-values'
import { VillageCanvasLayer, type VillageMark } from './village-canvas'
import type { MapMode, MapVillage } from '#shared/types/overview'

const pct = (x: number | null | undefined) => (x === null || x === undefined ? '—' : `${(x * 100).toFixed(1)} %`)

/** The tooltip's lines as plain text; the first is the village name, shown bold. */
export function villageTooltipLines(v: MapVillage): string[] {
  if (v.suppressed) return [v.name, 'Too few visits to show']
  const p = v.predicted
  return [
    v.name,
    `${v.visits} visits`,
    `Observed adoption ${pct(v.observedRate)}`,
    `Predicted ${pct(p?.estimate)}${p?.ciLow != null ? ` (95% CI ${pct(p.ciLow)}–${pct(p.ciHigh)})` : ''}`
  ]
}

/**
 * The tooltip as DOM built from text nodes: a village name is data a coordinator typed, never markup, so it is
 * never parsed as HTML (Leaflet would parse a string tooltip). `doc` is a parameter for the unit test only.
 */
export function villageTooltip(v: MapVillage, doc: Pick<Document, 'createElement'> = document): HTMLElement {
  const box = doc.createElement('div')
  villageTooltipLines(v).forEach((line, i) => {
    const part = doc.createElement(i === 0 ? 'strong' : 'div')
    part.textContent = line
    box.appendChild(part)
  })
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
