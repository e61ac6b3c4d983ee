import L from 'leaflet'
import { colourFor } from '#shared/utils/map-palette'
import { mapClasses, mapValue } from './map-values'
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

/**
 * Draws the villages into one layer: a boundary where one was uploaded, else a circle sized by visits.
 * Written against Leaflet directly rather than one Vue component per village, and drawn on a canvas: the first
 * render of 2,000 villages takes well under the 300 ms target either way (`npm run bench` times canvas against
 * Leaflet's SVG renderer side by side), but canvas keeps pan and zoom free of 2,000 DOM nodes.
 */
export function villageLayer(villages: readonly MapVillage[], mode: MapMode, renderer: L.Renderer): L.LayerGroup {
  const { classes } = mapClasses(mode)
  const layer = L.layerGroup()
  const maxVisits = Math.max(1, ...villages.map(v => v.visits ?? 0))
  for (const v of villages) {
    const style = { color: '#1b1d17', weight: 1, fillColor: colourFor(mapValue(v, mode), classes), fillOpacity: 1, renderer }
    const shape = v.boundary
      ? L.geoJSON(v.boundary as GeoJSON.GeoJsonObject, { style: () => style })
      : L.circleMarker([v.lat, v.lon], { ...style, radius: 5 + 10 * Math.sqrt((v.visits ?? 0) / maxVisits) })
    // Built when the tooltip first opens, not for every village up front.
    shape.bindTooltip(() => villageTooltip(v))
    layer.addLayer(shape)
  }
  return layer
}
