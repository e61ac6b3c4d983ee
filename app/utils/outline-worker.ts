/// <reference lib="webworker" />
// The map's base layer, fetched and decoded off the page's thread: the page asks for the countries near its villages
// and gets back only those, so opening the map never stalls on the world's outlines.
import type { Topology } from 'topojson-specification'
import { decodeOutlines, type Extent } from './outline-decode'

self.onmessage = async (event: MessageEvent<{ url: string, near: Extent }>) => {
  try {
    const answer = await fetch(event.data.url)
    if (!answer.ok) throw new Error(`outlines: HTTP ${answer.status}`)
    const topology = await answer.json() as Topology
    self.postMessage({ countries: decodeOutlines(topology, event.data.near) })
  }
  catch (error) {
    self.postMessage({ error: String(error) })
  }
}
