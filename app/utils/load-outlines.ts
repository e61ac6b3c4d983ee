import type { Topology } from 'topojson-specification'
import { decodeOutlines, type Extent } from './outline-decode'

/**
 * The base layer's countries near `near`, decoded in a worker so the first frames of the map (and the first pan) are
 * not held up by parsing and decoding the world atlas; on the page's own thread where workers cannot start.
 */
export async function loadOutlines(url: string, near: Extent): Promise<GeoJSON.FeatureCollection> {
  const here = async () => decodeOutlines(await $fetch<Topology>(url, { responseType: 'json' }), near)
  let worker: Worker
  try {
    worker = new Worker(new URL('./outline-worker.ts', import.meta.url), { type: 'module' })
  }
  catch {
    return here()
  }
  try {
    return await new Promise<GeoJSON.FeatureCollection>((resolve, reject) => {
      worker.onmessage = (e: MessageEvent<{ countries?: GeoJSON.FeatureCollection, error?: string }>) =>
        e.data.countries ? resolve(e.data.countries) : reject(new Error(e.data.error ?? 'outlines failed'))
      worker.onerror = e => reject(new Error(e.message))
      // An absolute address: the worker's own address is its chunk's, not the page's.
      worker.postMessage({ url: new URL(url, location.href).href, near })
    })
  }
  catch {
    return here()
  }
  finally {
    worker.terminate()
  }
}
