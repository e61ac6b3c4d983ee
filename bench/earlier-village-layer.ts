// The map's earlier way of drawing villages, kept as the bench's peer: one Leaflet vector object per village
// (circle markers on Leaflet's canvas renderer, each with its own tooltip). Not used by the app.
import L from 'leaflet'
import { colourFor } from '../shared/utils/map-palette'
import { mapClasses, mapValue } from '../app/utils/map-values'
import { villageTooltip } from '../app/utils/village-layer'
import type { MapMode, MapVillage } from '../shared/types/overview'

export function earlierVillageLayer(villages: readonly MapVillage[], mode: MapMode, renderer: L.Renderer): L.LayerGroup {
  const { classes } = mapClasses(mode)
  const layer = L.layerGroup()
  const maxVisits = Math.max(1, ...villages.map(v => v.visits ?? 0))
  for (const v of villages) {
    const style = { color: '#1b1d17', weight: 1, fillColor: colourFor(mapValue(v, mode), classes), fillOpacity: 1, renderer }
    const shape = L.circleMarker([v.lat, v.lon], { ...style, radius: 5 + 10 * Math.sqrt((v.visits ?? 0) / maxVisits) })
    shape.bindTooltip(() => villageTooltip(v))
    layer.addLayer(shape)
  }
  return layer
}
