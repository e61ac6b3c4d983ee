import L from 'leaflet'

/**
 * The countries of the base layer whose extent meets the given bounds. Leaflet projects every vertex of every
 * feature it draws; the whole world at 1:50m is most of the map's first render, a district needs one to three.
 */
export function outlinesNear(countries: GeoJSON.FeatureCollection, bounds: L.LatLngBounds): GeoJSON.FeatureCollection {
  return { type: 'FeatureCollection', features: countries.features.filter(f => extentOf(f.geometry).intersects(bounds)) }
}

const extents = new WeakMap<GeoJSON.Geometry, L.LatLngBounds>()

function extentOf(geometry: GeoJSON.Geometry): L.LatLngBounds {
  const known = extents.get(geometry)
  if (known) return known
  let south = 90, west = 180, north = -90, east = -180
  const visit = (c: unknown): void => {
    if (typeof (c as number[])[0] === 'number') {
      const [lon, lat] = c as [number, number]
      if (lat < south) south = lat
      if (lat > north) north = lat
      if (lon < west) west = lon
      if (lon > east) east = lon
      return
    }
    for (const inner of c as unknown[]) visit(inner)
  }
  if ('coordinates' in geometry) visit(geometry.coordinates)
  const extent = L.latLngBounds([south, west], [north, east])
  extents.set(geometry, extent)
  return extent
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
