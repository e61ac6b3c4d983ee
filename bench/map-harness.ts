// Runs in headless Chromium (bundled by bench/map.bench.ts): the adoption map's own drawing code on
// 2,000 generated villages, timed from the start of drawing to the first frame painted after it.
import L from 'leaflet'
import { feature } from 'topojson-client'
import type { GeometryCollection, Topology } from 'topojson-specification'
import countriesTopology from 'world-atlas/countries-50m.json'
import { villageLayer } from '../app/utils/village-layer'
import type { MapVillage } from '../shared/types/overview'

declare global {
  interface Window { runMapBench: (n: number, renderer: 'canvas' | 'svg') => Promise<number> }
}

function villages(n: number): MapVillage[] {
  let seed = 42
  const u = () => (seed = (seed * 16807) % 2147483647) / 2147483647
  return Array.from({ length: n }, (_, i) => {
    const predicted = 0.05 + 0.6 * u()
    return {
      code: `V${i}`,
      name: `Village ${i}`,
      lat: -2 + 4 * u(),
      lon: 33 + 5 * u(),
      boundary: null,
      visits: 5 + Math.floor(60 * u()),
      suppressed: false,
      observedRate: Math.min(1, Math.max(0, predicted + 0.2 * (u() - 0.5))),
      predicted: { estimate: predicted, ciLow: predicted - 0.05, ciHigh: predicted + 0.05 },
      scenarios: {}
    }
  })
}

const frame = () => new Promise(resolve => requestAnimationFrame(() => requestAnimationFrame(resolve)))

window.runMapBench = async (n, rendererName) => {
  document.body.innerHTML = '<div id="map" style="width:1200px;height:800px"></div>'
  const data = villages(n)
  const started = performance.now()
  const map = L.map('map', { preferCanvas: rendererName === 'canvas' })
  const topology = countriesTopology as unknown as Topology
  L.geoJSON(feature(topology, topology.objects.countries as GeometryCollection) as GeoJSON.FeatureCollection, {
    style: () => ({ color: '#8a8d80', weight: 1, fillColor: '#ece6d3', fillOpacity: 1 })
  }).addTo(map)
  map.fitBounds(L.latLngBounds(data.map(v => [v.lat, v.lon] as [number, number])))
  const renderer = rendererName === 'canvas' ? L.canvas({ padding: 0.5 }) : L.svg({ padding: 0.5 })
  villageLayer(data, 'predicted', renderer).addTo(map)
  await frame()
  const ms = performance.now() - started
  map.remove()
  return ms
}
