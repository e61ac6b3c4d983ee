import L from 'leaflet'
import { colourFor } from '#shared/utils/map-palette'
import { mapClasses, mapValue } from './map-values'
import type { MapMode, MapVillage } from '#shared/types/overview'

const pct = (x: number | null | undefined) => (x === null || x === undefined ? '—' : `${(x * 100).toFixed(1)} %`)

export function villageTooltip(v: MapVillage): string {
  if (v.suppressed) return `<strong>${v.name}</strong><br>Too few visits to show`
  const p = v.predicted
  return `<strong>${v.name}</strong><br>${v.visits} visits<br>Observed adoption ${pct(v.observedRate)}`
    + `<br>Predicted ${pct(p?.estimate)}${p?.ciLow != null ? ` (95% CI ${pct(p.ciLow)}–${pct(p.ciHigh)})` : ''}`
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
    shape.bindTooltip(villageTooltip(v))
    layer.addLayer(shape)
  }
  return layer
}
