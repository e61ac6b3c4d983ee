// Runs in headless Chromium (bundled by bench/map.bench.ts): the adoption map's own drawing code on generated
// villages, against the earlier one-Leaflet-object-per-village layer, with the base layer in its own pane as the
// app draws it. Times the first render (start of drawing to the first frame painted after it) and the frame times
// of a programmatic pan and zoom.
import L from 'leaflet'
import { feature } from 'topojson-client'
import type { GeometryCollection, Topology } from 'topojson-specification'
import countriesTopology from 'world-atlas/countries-50m.json'
import { outlineLayer, outlinesNear } from '../app/utils/base-outlines'
import { villageLayer } from '../app/utils/village-layer'
import { earlierVillageLayer } from './earlier-village-layer'
import type { MapVillage } from '../shared/types/overview'

type Approach = 'ours' | 'earlier'
interface FrameStats { frames: number, medianMs: number, p95Ms: number, maxMs: number }
declare global {
  interface Window {
    runMapBench: (n: number, approach: Approach) => Promise<number>
    runPanZoomBench: (n: number, approach: Approach) => Promise<FrameStats>
  }
}

function villages(n: number): MapVillage[] {
  let seed = 42
  const u = () => (seed = (seed * 16807) % 2147483647) / 2147483647
  return Array.from({ length: n }, (_, i) => {
    const predicted = 0.05 + 0.6 * u()
    const visits = 5 + Math.floor(60 * u())
    return {
      code: `V${i}`,
      name: `Village ${i}`,
      lat: -2 + 4 * u(),
      lon: 33 + 5 * u(),
      boundary: null,
      visits,
      suppressed: false,
      belowVisitTarget: visits < 15,
      observedRate: Math.min(1, Math.max(0, predicted + 0.2 * (u() - 0.5))),
      predicted: { estimate: predicted, ciLow: predicted - 0.05, ciHigh: predicted + 0.05 },
      scenarios: {}
    }
  })
}

const countries = (() => {
  const topology = countriesTopology as unknown as Topology
  return feature(topology, topology.objects.countries as GeometryCollection) as GeoJSON.FeatureCollection
})()
const frame = () => new Promise(resolve => requestAnimationFrame(() => requestAnimationFrame(resolve)))
let map: L.Map | undefined

/** A map as the app builds it: the base layer's pane under the overlay pane, the villages' pane above it. */
function drawMap(data: MapVillage[], approach: Approach) {
  map?.remove()
  document.body.innerHTML = '<div id="map" style="width:1200px;height:800px"></div>'
  const m = map = L.map('map', { preferCanvas: true, zoomSnap: 0.5 })
  m.createPane('base').style.zIndex = '250'
  m.createPane('villages').style.zIndex = '450'
  const bounds = L.latLngBounds(data.map(v => [v.lat, v.lon] as [number, number]))
  m.fitBounds(bounds, { animate: false })
  outlineLayer(outlinesNear(countries, bounds.pad(3)), 'base').addTo(m)
  if (approach === 'ours') villageLayer(data, 'predicted', 'villages').addTo(m)
  else earlierVillageLayer(data, 'predicted', L.canvas({ pane: 'villages', padding: 0.25 })).addTo(m)
  return m
}

window.runMapBench = async (n, approach) => {
  const data = villages(n)
  const started = performance.now()
  drawMap(data, approach)
  await frame()
  return performance.now() - started
}

/** Frame times (between animation frames) while the map pans by 300 px twice and zooms in and out, animated. */
window.runPanZoomBench = async (n, approach) => {
  const m = drawMap(villages(n), approach)
  await frame()
  const gaps: number[] = []
  let last = performance.now()
  let running = true
  const tick = (t: number) => {
    gaps.push(t - last)
    last = t
    if (running) requestAnimationFrame(tick)
  }
  requestAnimationFrame((t) => {
    last = t
    requestAnimationFrame(tick)
  })
  const settle = () => new Promise<void>(resolve => m.once('moveend', () => setTimeout(resolve, 50)))
  for (const step of [() => m.panBy([300, 0], { animate: true, duration: 0.5 }), () => m.panBy([0, 300], { animate: true, duration: 0.5 }),
    () => m.zoomIn(1, { animate: true }), () => m.zoomOut(1, { animate: true })]) {
    const done = settle()
    step()
    await done
  }
  running = false
  await frame()
  const sorted = [...gaps].sort((a, b) => a - b)
  return {
    frames: sorted.length,
    medianMs: sorted[Math.floor(sorted.length / 2)]!,
    p95Ms: sorted[Math.floor(sorted.length * 0.95)]!,
    maxMs: sorted.at(-1)!
  }
}
