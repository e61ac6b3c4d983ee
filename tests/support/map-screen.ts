import { PNG } from 'pngjs'
import type { Page } from 'playwright-core'

// Reads the adoption map as a person sees it: a screenshot of the composed page (every canvas, pane and overlay
// together), decoded, with each village's pixel found from its latitude and longitude. Nothing here looks at a
// canvas layer or the component's state; the map only exposes its current view (centre and zoom) as an attribute.

export interface PlacedVillage {
  name: string
  lat: number
  lon: number
}

export interface VillagePixel {
  name: string
  x: number
  y: number
  /** The composed screen's colour at the village's centre (see below how it is read), #rrggbb. */
  colour: string
  /** Dark runs (outline, target ring) met going right from the centre, over 26 px. */
  darkRuns: number
}

const hex = (r: number, g: number, b: number) => `#${[r, g, b].map(v => v.toString(16).padStart(2, '0')).join('')}`

/** Web Mercator pixel coordinates at a zoom level (256-px tiles), as the published definition gives them. */
function mercator(lat: number, lon: number, zoom: number) {
  const scale = 256 * 2 ** zoom
  const phi = Math.max(-85.0511287798, Math.min(85.0511287798, lat)) * Math.PI / 180
  return { x: scale * (lon + 180) / 360, y: scale * (0.5 - Math.log(Math.tan(Math.PI / 4 + phi / 2)) / (2 * Math.PI)) }
}

/** The villages inside the visible map (10 px from its edges) with the screen's colour at each. */
export async function villagePixels(page: Page, villages: readonly PlacedVillage[], scope = page.locator('body')): Promise<VillagePixel[]> {
  const map = scope.getByTestId('adoption-map')
  // No pointer over the map: a village's hover label would cover what is under it.
  await page.mouse.move(0, 0)
  // The element's own screenshot: scrolled into view, everything drawn over it included.
  const shot = PNG.sync.read(await map.screenshot())
  const box = await map.evaluate((el) => {
    const r = el.getBoundingClientRect()
    // The map's own buttons (zoom) sit over a corner of it; a village under them is not expected to show.
    const controls = [...el.querySelectorAll('.leaflet-control')].map((c) => {
      const b = c.getBoundingClientRect()
      return { left: b.left - r.left - el.clientLeft, top: b.top - r.top - el.clientTop, right: b.right - r.left - el.clientLeft, bottom: b.bottom - r.top - el.clientTop }
    })
    return { left: el.clientLeft, top: el.clientTop, width: el.clientWidth, height: el.clientHeight, view: el.getAttribute('data-view') ?? '', controls }
  })
  const [lat, lon, zoom] = box.view.split(',').map(Number) as [number, number, number]
  const centre = mercator(lat, lon, zoom)
  const at = (x: number, y: number) => {
    const i = (shot.width * (y + box.top) + x + box.left) * 4
    return [shot.data[i]!, shot.data[i + 1]!, shot.data[i + 2]!] as const
  }
  return villages.flatMap((v) => {
    const p = mercator(v.lat, v.lon, zoom)
    const x = Math.round(p.x - centre.x + box.width / 2)
    const y = Math.round(p.y - centre.y + box.height / 2)
    if (x < 10 || y < 10 || x >= box.width - 36 || y >= box.height - 10) return []
    if (box.controls.some(c => x >= c.left - 4 && x <= c.right + 4 && y >= c.top - 4 && y <= c.bottom + 4)) return []
    // The most common colour of the 5 × 5 pixels around the centre, leaving out dark pixels: outlines and a
    // neighbour's target ring may cross a village's centre where villages overlap.
    const counts = new Map<string, number>()
    for (let dy = -2; dy <= 2; dy++) {
      for (let dx = -2; dx <= 2; dx++) {
        const [r, g, b] = at(x + dx, y + dy)
        // The outline and ring colour (#1b1d17); the darkest legend classes are dark too, so only this ink is left out.
        if (Math.abs(r - 0x1B) <= 12 && Math.abs(g - 0x1D) <= 12 && Math.abs(b - 0x17) <= 12) continue
        counts.set(hex(r, g, b), (counts.get(hex(r, g, b)) ?? 0) + 1)
      }
    }
    const colour = [...counts].sort((a, b) => b[1] - a[1])[0]?.[0] ?? 'dark'
    let darkRuns = 0
    let inDark = false
    for (let dx = 0; dx < 26; dx++) {
      const [r, g, b] = at(x + dx, y)
      const dark = r + g + b < 240
      if (dark && !inDark) darkRuns++
      inDark = dark
    }
    return [{ name: v.name, x, y, colour, darkRuns }]
  })
}

/** The legend's class colours (and the "too few visits" grey) as the page shows them. */
export async function legendColours(page: Page, scope = page.locator('body')): Promise<string[]> {
  return scope.getByTestId('map-legend').locator('span[style*="background"], span.bg-\\[\\#9a9a9a\\]').evaluateAll(els => els.map((e) => {
    const [r, g, b] = getComputedStyle(e).backgroundColor.match(/\d+/g)!.map(Number)
    return `#${[r!, g!, b!].map(v => v.toString(16).padStart(2, '0')).join('')}`
  }))
}

/** Each village's colour in the table beside the map (the colour the map should show), by village name. */
export async function tableColours(page: Page, scope = page.locator('body')): Promise<Map<string, string>> {
  const rows = await scope.getByTestId('map-village').evaluateAll(els => els.map(e => [e.querySelector('td')!.textContent!.trim(), e.querySelector('[data-colour]')!.getAttribute('data-colour')!] as const))
  return new Map(rows.map(([name, colour]) => [name, colour.toLowerCase()]))
}
