/**
 * Adoption-map benchmark: time to the first full render of 2,000 village circles plus the base layer in
 * headless Debian Chromium, with the canvas renderer the map uses, side by side with Leaflet's SVG renderer
 * (one DOM node per village). Target: under 300 ms. Best of 5 runs each, after one warm-up.
 * Run: npx tsx bench/map.bench.ts
 */
import { readFileSync } from 'node:fs'
import { dirname, join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { build } from 'esbuild'
import { chromium } from 'playwright-core'
import { mergeResults, printTable, round } from './lib/results-file'

const here = dirname(fileURLToPath(import.meta.url))
const N = 2000
const RUNS = 5

async function main() {
  const bundle = await build({
    entryPoints: [join(here, 'map-harness.ts')],
    // The map's drawing code imports shared code through the app's alias.
    alias: { '#shared': join(here, '..', 'shared') },
    bundle: true,
    write: false,
    format: 'iife',
    target: 'es2022',
    logLevel: 'warning'
  })
  const css = readFileSync(join(here, '..', 'node_modules', 'leaflet', 'dist', 'leaflet.css'), 'utf8')
  const browser = await chromium.launch({
    executablePath: '/usr/bin/chromium',
    headless: true,
    args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--no-first-run']
  })
  try {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } })
    await page.setContent(`<!doctype html><html><head><style>${css}</style></head><body></body></html>`)
    await page.addScriptTag({ content: bundle.outputFiles[0]!.text })
    const best: Record<string, number> = {}
    for (const renderer of ['canvas', 'svg'] as const) {
      await page.evaluate(([n, r]) => window.runMapBench(n, r), [N, renderer] as const)
      const times: number[] = []
      for (let i = 0; i < RUNS; i++) times.push(await page.evaluate(([n, r]) => window.runMapBench(n, r), [N, renderer] as const))
      best[renderer] = Math.min(...times)
    }
    const ratio = best.canvas! / best.svg!
    printTable(['benchmark', 'villages', 'canvas ms (ours)', 'svg ms (peer)', 'ratio', 'target'], [
      ['map first render', String(N), best.canvas!.toFixed(1), best.svg!.toFixed(1), ratio.toFixed(3), best.canvas! < 300 ? 'met (< 300 ms)' : 'MISSED (>= 300 ms)']
    ])
    mergeResults([{ name: 'map first render', n: N, ours_ms: round(best.canvas!), peer: 'Leaflet SVG renderer', peer_ms: round(best.svg!), ratio: round(ratio, 3), peak_rss_mb: null }])
  }
  finally {
    await browser.close()
  }
}

main().catch((error) => {
  console.error(error)
  process.exit(1)
})
