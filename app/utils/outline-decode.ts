import { feature } from 'topojson-client'
import type { GeometryCollection, Topology } from 'topojson-specification'

/** South, west, north, east in degrees. */
export type Extent = [number, number, number, number]

// Kept per geometry: the same decoded countries are filtered again whenever a map opens on them.
const extents = new WeakMap<GeoJSON.Geometry, Extent>()

export function extentOf(geometry: GeoJSON.Geometry | null): Extent | null {
  if (!geometry || !('coordinates' in geometry)) return null
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
  visit(geometry.coordinates)
  const extent: Extent = [south, west, north, east]
  extents.set(geometry, extent)
  return extent
}

export const meets = (a: Extent, b: Extent) => a[0] <= b[2] && a[2] >= b[0] && a[1] <= b[3] && a[3] >= b[1]

/**
 * The countries of a world-atlas topology whose extent meets `near`, as GeoJSON. Plain code with no Leaflet and no
 * DOM, so it runs in a worker (outline-worker.ts): decoding the 1:50m world is hundreds of milliseconds of script.
 */
export function decodeOutlines(topology: Topology, near: Extent): GeoJSON.FeatureCollection {
  return countriesNear(feature(topology, topology.objects.countries as GeometryCollection) as GeoJSON.FeatureCollection, near)
}

/** The countries whose extent meets `near`. */
export function countriesNear(countries: GeoJSON.FeatureCollection, near: Extent): GeoJSON.FeatureCollection {
  return {
    type: 'FeatureCollection',
    features: countries.features.filter((f) => {
      const extent = extentOf(f.geometry)
      return extent !== null && meets(extent, near)
    })
  }
}
