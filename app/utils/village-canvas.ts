import L from 'leaflet'
import { DiscRaster, rgbOf, type Rgb } from './disc-raster'

/** One village as the canvas layer draws it: a circle at its centre, or its boundary rings where one was uploaded. */
export interface VillageMark {
  lat: number
  lon: number
  /** Circle radius in CSS pixels (ignored when `rings` is given). */
  radius: number
  fill: string
  /** Drawn with a ring around it: fewer visits than the coordinator's target. */
  marked: boolean
  /** Boundary rings as [lat, lon] pairs (outer ring first), or null for a circle. */
  rings: Array<Array<[number, number]>> | null
}

interface Options extends L.LayerOptions {
  pane: string
  /** How much of the view, on each side, the canvas also covers, so a short pan shows no empty edge. */
  padding?: number
  /** The hover text of mark i: a DOM node built with textContent, never HTML from data. */
  tooltip: (index: number) => HTMLElement
}

const OUTLINE = '#1b1d17'
const INK = rgbOf(OUTLINE)
const DASH: [number, number] = [5, 3]
const CELL = 48

/**
 * All the villages on one canvas, drawn in one pass: circles stamped straight into one pixel buffer (disc-raster.ts),
 * boundaries as canvas paths above them, so 20,000 villages cost one putImageData instead of 20,000 Leaflet vector
 * objects (each with its own projection, bounds and event bookkeeping) or a canvas path the browser rasterises slowly.
 * Hover is hit-tested through a grid of 48-px cells built while drawing. Written by hand because Leaflet's own
 * canvas renderer keeps per-path state and redraws path by path; `npm run bench` times both side by side.
 * The container handling (padding, zoom animation by CSS transform) follows Leaflet's renderer.
 */
export class VillageCanvasLayer extends L.Layer {
  declare options: Options
  private marks: readonly VillageMark[]
  private canvas?: HTMLCanvasElement
  private ctx?: CanvasRenderingContext2D
  private drawnAt?: { centre: L.LatLng, zoom: number }
  /** Each mark's centre in the map's projected pixels at zoom 0, computed once: a redraw only scales and shifts. */
  private x0 = new Float64Array(0)
  private y0 = new Float64Array(0)
  /** Layer-pixel x, y of each mark's centre at the last draw. */
  private xs = new Float64Array(0)
  private ys = new Float64Array(0)
  /** Projected rings of marks with a boundary, at the last draw. */
  private shapes = new Map<number, Float64Array[]>()
  private grid = new Map<number, number[]>()
  private hovered = -1
  private image?: ImageData
  private colours = new Map<string, Rgb>()
  private tip?: L.Tooltip
  drawnCount = 0

  constructor(marks: readonly VillageMark[], options: Options) {
    super(options)
    L.setOptions(this, options)
    this.marks = marks
  }

  override onAdd(map: L.Map) {
    const canvas = this.canvas = document.createElement('canvas')
    canvas.className = 'leaflet-zoom-animated'
    canvas.style.pointerEvents = 'none'
    // A canvas kept in main memory: the layer writes its pixels from script (putImageData), which a GPU-backed
    // canvas would upload on every draw.
    this.ctx = canvas.getContext('2d', { willReadFrequently: true })!
    this.getPane()!.appendChild(canvas)
    this.tip = L.tooltip({ direction: 'top', offset: [0, -8], opacity: 0.95 })
    this.redraw(map)
    return this
  }

  override onRemove(map: L.Map) {
    map.closeTooltip(this.tip!)
    this.canvas?.remove()
    this.canvas = undefined
    return this
  }

  // One object for the layer's lifetime: Leaflet removes the handlers with the object getEvents returns then.
  private readonly events = {
    viewreset: () => this._map && this.redraw(this._map),
    zoom: () => this._map && this.transform(this._map.getCenter(), this._map.getZoom()),
    zoomanim: (e: L.LeafletEvent) => this.transform((e as L.ZoomAnimEvent).center, (e as L.ZoomAnimEvent).zoom),
    moveend: () => this._map && this.redraw(this._map),
    mousemove: (e: L.LeafletEvent) => this.hover((e as L.LeafletMouseEvent).layerPoint),
    mouseout: () => this.hover(null)
  }

  override getEvents() {
    return this.events
  }

  /** Keeps the drawn canvas under the map during a zoom animation (as Leaflet's renderer does), redrawn at its end. */
  private transform(centre: L.LatLng, zoom: number) {
    const map = this._map
    if (!map || !this.canvas || !this.drawnAt) return
    const scale = map.getZoomScale(zoom, this.drawnAt.zoom)
    const viewHalf = map.getSize().multiplyBy(0.5 + this.padding)
    const mapPane = L.DomUtil.getPosition(map.getPane('mapPane')!)
    const newOrigin = map.project(centre, zoom).subtract(map.getSize().divideBy(2)).add(mapPane).round()
    const topLeft = viewHalf.multiplyBy(-scale).add(map.project(this.drawnAt.centre, zoom)).subtract(newOrigin)
    L.DomUtil.setTransform(this.canvas, topLeft, scale)
  }

  private get padding() {
    return this.options.padding ?? 0.25
  }

  private redraw(map: L.Map) {
    const canvas = this.canvas
    const ctx = this.ctx
    if (!canvas || !ctx || ((map as unknown as { _animatingZoom?: boolean })._animatingZoom && this.drawnAt)) return
    const size = map.getSize()
    const min = map.containerPointToLayerPoint(size.multiplyBy(-this.padding)).round()
    const span = size.multiplyBy(1 + 2 * this.padding).round()
    const ratio = window.devicePixelRatio || 1
    L.DomUtil.setPosition(canvas, min)
    canvas.width = Math.round(span.x * ratio)
    canvas.height = Math.round(span.y * ratio)
    canvas.style.width = `${span.x}px`
    canvas.style.height = `${span.y}px`
    ctx.setTransform(ratio, 0, 0, ratio, -min.x * ratio, -min.y * ratio)
    this.drawnAt = { centre: map.getCenter(), zoom: map.getZoom() }
    this.paint(map, min, min.add(span))
  }

  private paint(map: L.Map, min: L.Point, max: L.Point) {
    const ctx = this.ctx!
    const n = this.marks.length
    const crs = map.options.crs!
    if (this.x0.length !== n) {
      this.x0 = new Float64Array(n)
      this.y0 = new Float64Array(n)
      this.xs = new Float64Array(n)
      this.ys = new Float64Array(n)
      for (let i = 0; i < n; i++) {
        const p = crs.latLngToPoint(L.latLng(this.marks[i]!.lat, this.marks[i]!.lon), 0)
        this.x0[i] = p.x
        this.y0[i] = p.y
      }
    }
    // Projections of Leaflet's CRSs are linear in the zoom's scale: pixel(z) = pixel(0) · scale(z) / scale(0).
    const factor = crs.scale(map.getZoom()) / crs.scale(0)
    const origin = map.getPixelOrigin()
    this.shapes.clear()
    this.grid.clear()
    const circles: number[] = []
    const shapes: number[] = []
    const marked: number[] = []
    for (let i = 0; i < n; i++) {
      const m = this.marks[i]!
      const x = this.xs[i] = this.x0[i]! * factor - origin.x
      const y = this.ys[i] = this.y0[i]! * factor - origin.y
      let left = x - m.radius, right = x + m.radius, top = y - m.radius, bottom = y + m.radius
      if (m.rings) {
        const rings = m.rings.map((ring) => {
          const out = new Float64Array(ring.length * 2)
          ring.forEach(([lat, lon], k) => {
            const q = map.latLngToLayerPoint([lat, lon])
            out[2 * k] = q.x
            out[2 * k + 1] = q.y
          })
          return out
        })
        ;[left, top, right, bottom] = extent(rings[0]!)
        this.shapes.set(i, rings)
      }
      if (right < min.x || left > max.x || bottom < min.y || top > max.y) continue
      if (m.rings) shapes.push(i)
      else circles.push(i)
      if (m.marked) marked.push(i)
      this.index(i, left, top, right, bottom)
    }
    // Circles (most villages) straight into pixels, then one putImageData; boundaries as canvas paths above them.
    const canvas = this.canvas!
    const ratio = window.devicePixelRatio || 1
    if (!this.image || this.image.width !== canvas.width || this.image.height !== canvas.height) this.image = ctx.createImageData(canvas.width, canvas.height)
    else this.image.data.fill(0)
    const raster = new DiscRaster(this.image.data, canvas.width, canvas.height, ratio, INK)
    const toDevice = (v: number, from: number) => (v - from) * ratio
    const cx = new Float64Array(circles.length)
    const cy = new Float64Array(circles.length)
    const radii = new Float64Array(circles.length)
    circles.forEach((i, k) => {
      cx[k] = toDevice(this.xs[i]!, min.x)
      cy[k] = toDevice(this.ys[i]!, min.y)
      radii[k] = this.marks[i]!.radius
    })
    // Only the discs not wholly hidden under later ones: the same pixels for a fraction of the work.
    for (const k of raster.visibleDiscs(cx, cy, radii, circles.length)) {
      const m = this.marks[circles[k]!]!
      raster.disc(cx[k]!, cy[k]!, m.radius, this.rgb(m.fill))
    }
    // Below target: a thick dark dashed ring just outside the village, readable on every class colour and without colour.
    for (const i of marked) if (!this.shapes.has(i)) raster.dashedRing(toDevice(this.xs[i]!, min.x), toDevice(this.ys[i]!, min.y), this.marks[i]!.radius + 4, 3, DASH)
    ctx.putImageData(this.image, 0, 0)
    ctx.lineWidth = 1
    ctx.strokeStyle = OUTLINE
    for (const i of shapes) {
      // One by one, evenodd, so a boundary's holes stay holes.
      ctx.fillStyle = this.marks[i]!.fill
      ctx.beginPath()
      this.trace(ctx, i)
      ctx.fill('evenodd')
      ctx.stroke()
      if (this.marks[i]!.marked) {
        ctx.lineWidth = 3
        ctx.setLineDash(DASH)
        ctx.stroke()
        ctx.setLineDash([])
        ctx.lineWidth = 1
      }
    }
    const drawn = circles.length + shapes.length
    this.drawnCount = drawn
    this.fire('drawn', { count: drawn })
  }

  private trace(ctx: CanvasRenderingContext2D, i: number) {
    for (const r of this.shapes.get(i)!) {
      ctx.moveTo(r[0]!, r[1]!)
      for (let k = 2; k < r.length; k += 2) ctx.lineTo(r[k]!, r[k + 1]!)
      ctx.closePath()
    }
  }

  private rgb(hex: string): Rgb {
    let c = this.colours.get(hex)
    if (!c) {
      c = rgbOf(hex)
      this.colours.set(hex, c)
    }
    return c
  }

  private index(i: number, left: number, top: number, right: number, bottom: number) {
    for (let gx = Math.floor(left / CELL); gx <= Math.floor(right / CELL); gx++) {
      for (let gy = Math.floor(top / CELL); gy <= Math.floor(bottom / CELL); gy++) {
        const key = gx * 100_003 + gy
        const cell = this.grid.get(key)
        if (cell) cell.push(i)
        else this.grid.set(key, [i])
      }
    }
  }

  /** The village under a layer point: the last drawn (top-most) one that contains it. */
  villageAt(point: L.Point): number {
    const cell = this.grid.get(Math.floor(point.x / CELL) * 100_003 + Math.floor(point.y / CELL)) ?? []
    for (let k = cell.length - 1; k >= 0; k--) {
      const i = cell[k]!
      const rings = this.shapes.get(i)
      if (rings ? inside(rings, point.x, point.y) : (point.x - this.xs[i]!) ** 2 + (point.y - this.ys[i]!) ** 2 <= (this.marks[i]!.radius + 2) ** 2) return i
    }
    return -1
  }

  private hover(point: L.Point | null) {
    const map = this._map
    if (!map || !this.tip) return
    const i = point ? this.villageAt(point) : -1
    if (i === this.hovered) return
    this.hovered = i
    if (i < 0) {
      map.closeTooltip(this.tip)
      return
    }
    const m = this.marks[i]!
    this.tip.setContent(this.options.tooltip(i)).setLatLng([m.lat, m.lon])
    map.openTooltip(this.tip)
  }
}

function extent(r: Float64Array): [number, number, number, number] {
  let left = Infinity, top = Infinity, right = -Infinity, bottom = -Infinity
  for (let k = 0; k < r.length; k += 2) {
    left = Math.min(left, r[k]!)
    right = Math.max(right, r[k]!)
    top = Math.min(top, r[k + 1]!)
    bottom = Math.max(bottom, r[k + 1]!)
  }
  return [left, top, right, bottom]
}

/** Even-odd ray casting over all rings, matching the canvas's 'evenodd' fill. */
function inside(rings: Float64Array[], x: number, y: number): boolean {
  let hit = false
  for (const r of rings) {
    for (let a = 0, b = r.length - 2; a < r.length; b = a, a += 2) {
      const ya = r[a + 1]!, yb = r[b + 1]!
      if ((ya > y) !== (yb > y) && x < ((r[b]! - r[a]!) * (y - ya)) / (yb - ya) + r[a]!) hit = !hit
    }
  }
  return hit
}
