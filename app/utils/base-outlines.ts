import L from 'leaflet'
import { countriesNear } from './outline-decode'

/**
 * The countries of the base layer whose extent meets the given bounds. Leaflet projects every vertex of every
 * feature it draws; the whole world at 1:50m is most of the map's first render, a district needs one to three.
 */
export function outlinesNear(countries: GeoJSON.FeatureCollection, bounds: L.LatLngBounds): GeoJSON.FeatureCollection {
  return countriesNear(countries, [bounds.getSouth(), bounds.getWest(), bounds.getNorth(), bounds.getEast()])
}

/**
 * The base layer in its own pane and canvas, never interactive: outlines with a light land fill, or outlines
 * alone over a tile layer (whose pane lies below, so a fill would cover it).
 */
export function outlineLayer(countries: GeoJSON.FeatureCollection, pane: string, fill = true): L.GeoJSON {
  return L.geoJSON(countries, {
    pane,
    interactive: false,
    renderer: L.canvas({ pane, padding: 0.25 }),
    style: () => ({ color: '#8a8d80', weight: 1, fillColor: '#ece6d3', fillOpacity: fill ? 1 : 0 })
  } as L.GeoJSONOptions)
}
