/**
 * Circles with a one-pixel outline, and dashed rings, rasterised straight into an RGBA pixel buffer that the
 * village layer then puts on its canvas in one call. Written by hand because the canvas API was the map's
 * bottleneck: 20,000 arcs as a few large paths cost a browser without a GPU over a second to rasterise (a dashed
 * stroke over thousands of rings alone about half of it), while stamping precomputed discs is a few typed-array
 * writes per row of pixels (`npm run bench`, bench/map.bench.ts, times it).
 *
 * A disc's centre is put on the centre of the pixel it falls in, and its radius snapped so its outline covers whole
 * pixels (a crisp line, like the 1-px outline the map always had): at most half a pixel from the exact place and
 * size, invisible at map scale; the hover test still uses the exact place.
 */

/** Colours as the pixel buffer holds them: r, g, b in 0..255. */
export type Rgb = readonly [number, number, number]

export function rgbOf(hex: string): Rgb {
  const h = hex.startsWith('#') ? hex.slice(1) : hex
  if (!/^[0-9a-f]{6}$/i.test(h)) throw new Error(`not a #rrggbb colour: ${hex}`)
  return [Number.parseInt(h.slice(0, 2), 16), Number.parseInt(h.slice(2, 4), 16), Number.parseInt(h.slice(4, 6), 16)]
}

/** One shape around a centre pixel: solid spans of the fill, then the pixels only partly covered or inked. */
interface Stamp {
  /** Triples (dy, dx from, dx to exclusive) of pixels fully covered by the fill. */
  spans: Int16Array
  /** Per other pixel: dx, dy, the weight of the fill colour and of the ink colour (their sum is its alpha). */
  dx: Int16Array
  dy: Int16Array
  fillWeight: Float32Array
  inkWeight: Float32Array
  /** Per fill colour: each other pixel's colour over a transparent pixel, the common case, computed once. */
  overClear: Map<number, Uint32Array>
}

/** Blocks of the occlusion grid: 4 × 4 device pixels. */
const BLOCK_SHIFT = 2
const BLOCK = 1 << BLOCK_SHIFT

const clamp01 = (x: number) => (x < 0 ? 0 : x > 1 ? 1 : x)

/** Coverage of a band of `width` pixels centred on radius `r`, for a pixel whose centre is `d` from the centre. */
const band = (d: number, r: number, width: number) => clamp01(Math.min(d - (r - width / 2), r + width / 2 - d) + 0.5)

function buildStamp(radius: number, lineWidth: number, dash: readonly [number, number] | null, filled: boolean): Stamp {
  const ext = Math.ceil(radius + lineWidth / 2 + 1)
  const spans: number[] = []
  const dx: number[] = []
  const dy: number[] = []
  const wf: number[] = []
  const wk: number[] = []
  for (let y = -ext; y <= ext; y++) {
    let spanFrom = Number.NaN
    // One step past the edge (never covered) closes the last span of the row.
    for (let x = -ext; x <= ext + 1; x++) {
      const d = Math.hypot(x, y)
      let ink = band(d, radius, lineWidth)
      if (dash && ink > 0) {
        // Along the ring from angle 0, clockwise on screen as the canvas draws an arc: on, then off.
        const angle = Math.atan2(y, x)
        const along = (angle < 0 ? angle + 2 * Math.PI : angle) * radius
        if (along % (dash[0] + dash[1]) >= dash[0]) ink = 0
      }
      const fill = filled ? clamp01(radius + 0.5 - d) * (1 - ink) : 0
      const solid = fill === 1
      if (solid && Number.isNaN(spanFrom)) spanFrom = x
      if (!solid && !Number.isNaN(spanFrom)) {
        spans.push(y, spanFrom, x)
        spanFrom = Number.NaN
      }
      if (!solid && fill + ink > 0) {
        dx.push(x)
        dy.push(y)
        wf.push(fill)
        wk.push(ink)
      }
    }
  }
  return { spans: Int16Array.from(spans), dx: Int16Array.from(dx), dy: Int16Array.from(dy), fillWeight: Float32Array.from(wf), inkWeight: Float32Array.from(wk), overClear: new Map() }
}

/**
 * Draws into `data` (an ImageData's pixels, `width` × `height`, straight — not premultiplied — alpha), in device
 * pixels. `scale` is the device pixel ratio: radii, the outline, ring offset and dashes are given in CSS pixels.
 */
export class DiscRaster {
  private words: Uint32Array
  private discs = new Map<number, Stamp>()
  private rings = new Map<number, Stamp>()
  private dash: readonly [number, number] | null = null
  private ink: Rgb
  private inkWord: number
  private littleEndian = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1

  constructor(private data: Uint8ClampedArray, private width: number, private height: number, private scale: number, ink: Rgb) {
    this.words = new Uint32Array(data.buffer, data.byteOffset, data.length >> 2)
    this.ink = ink
    this.inkWord = this.word(ink)
  }

  private word([r, g, b]: Rgb): number {
    return this.littleEndian ? ((255 << 24) | (b << 16) | (g << 8) | r) >>> 0 : ((r << 24) | (g << 16) | (b << 8) | 255) >>> 0
  }

  /**
   * Radius in device pixels such that the line covers whole pixels (a crisp line): the centre sits on a pixel's
   * centre, so an odd line width needs a whole radius and an even one a half.
   */
  private snapped(radius: number, lineWidth: number): number {
    const half = lineWidth % 2 === 0 ? 0.5 : 0
    return Math.max(1, Math.round(radius * this.scale - half)) + half
  }

  private stamp(cache: Map<number, Stamp>, radius: number, lineWidth: number, dash: readonly [number, number] | null, filled: boolean): Stamp {
    // Radii are whole or half pixels and line widths whole: one number keys them.
    const key = radius * 2 * 1024 + lineWidth
    let s = cache.get(key)
    if (!s) {
      s = buildStamp(radius, lineWidth, dash, filled)
      cache.set(key, s)
    }
    return s
  }

  /**
   * A filled circle of `radius` CSS px centred at device position (x, y) (on the centre of the pixel it falls in),
   * outlined with the ink colour 1 CSS px wide.
   */
  disc(x: number, y: number, radius: number, fill: Rgb) {
    const line = Math.max(1, Math.round(this.scale))
    this.put(this.stamp(this.discs, this.snapped(radius, line), line, null, true), Math.floor(x), Math.floor(y), fill)
  }

  /**
   * Which of these discs (centres and radii as `disc` takes them, in drawing order) would show: the indices into
   * `xs`/`ys`/`radii` of those not wholly under the solid fill of discs drawn after them, in drawing order. Walks
   * the discs from the top down over a grid of 4-px blocks, marking the blocks a disc's solid interior fills; a disc
   * whose every block is already filled is skipped, so drawing the rest gives exactly the same pixels. With tens of
   * thousands of villages in one view most discs lie under others: skipping them is most of the raster's work saved.
   */
  visibleDiscs(xs: Float64Array, ys: Float64Array, radii: Float64Array, count: number): Int32Array {
    const line = Math.max(1, Math.round(this.scale))
    const bw = (this.width + BLOCK - 1) >> BLOCK_SHIFT
    const bh = (this.height + BLOCK - 1) >> BLOCK_SHIFT
    const filled = new Uint8Array(bw * bh)
    const keep = new Int32Array(count)
    let kept = 0
    for (let i = count - 1; i >= 0; i--) {
      const cx = Math.floor(xs[i]!)
      const cy = Math.floor(ys[i]!)
      const r = this.snapped(radii[i]!, line)
      const ext = Math.ceil(r + line / 2 + 1)
      // Blocks the stamp's extent touches, clipped to the buffer (pixels outside it are never drawn).
      const bx0 = Math.max(0, (cx - ext) >> BLOCK_SHIFT), bx1 = Math.min(bw - 1, (cx + ext) >> BLOCK_SHIFT)
      const by0 = Math.max(0, (cy - ext) >> BLOCK_SHIFT), by1 = Math.min(bh - 1, (cy + ext) >> BLOCK_SHIFT)
      let hidden = bx0 <= bx1 && by0 <= by1
      for (let by = by0; hidden && by <= by1; by++) {
        for (let bx = bx0; bx <= bx1; bx++) {
          if (!filled[by * bw + bx]) {
            hidden = false
            break
          }
        }
      }
      if (hidden) continue
      keep[kept++] = i
      // A pixel is solid fill when its centre is within r - line/2 - 1/2 of the disc's centre pixel (see
      // buildStamp: the ink band starts there); a block is filled when its farthest pixel is.
      const solid = r - line / 2 - 0.5
      const solid2 = solid * solid
      for (let by = by0; by <= by1; by++) {
        const y0 = (by << BLOCK_SHIFT) - cy, y1 = y0 + BLOCK - 1
        const dy = Math.max(Math.abs(y0), Math.abs(y1))
        for (let bx = bx0; bx <= bx1; bx++) {
          const x0 = (bx << BLOCK_SHIFT) - cx, x1 = x0 + BLOCK - 1
          const dx = Math.max(Math.abs(x0), Math.abs(x1))
          if (dx * dx + dy * dy <= solid2) filled[by * bw + bx] = 1
        }
      }
    }
    return keep.subarray(0, kept).reverse()
  }

  /** A dashed ring in the ink colour: `width` CSS px wide at `radius` CSS px, dashes of `dash` CSS px. */
  dashedRing(x: number, y: number, radius: number, width: number, dash: readonly [number, number]) {
    const line = Math.max(1, Math.round(width * this.scale))
    if (!this.dash || this.dash[0] !== dash[0] || this.dash[1] !== dash[1]) {
      this.dash = dash
      this.rings.clear()
    }
    const scaled: [number, number] = [dash[0] * this.scale, dash[1] * this.scale]
    this.put(this.stamp(this.rings, this.snapped(radius, line), line, scaled, false), Math.floor(x), Math.floor(y), this.ink)
  }

  private put(s: Stamp, cx: number, cy: number, fill: Rgb) {
    const { width, height, words, data } = this
    const fillWord = this.word(fill)
    const { spans } = s
    for (let k = 0; k < spans.length; k += 3) {
      const y = cy + spans[k]!
      if (y < 0 || y >= height) continue
      const from = Math.max(0, cx + spans[k + 1]!)
      const to = Math.min(width, cx + spans[k + 2]!)
      // A plain loop: spans are short, and a fill() call per span cost more than the writes.
      for (let p = y * width + from, end = y * width + to; p < end; p++) words[p] = fillWord
    }
    const [fr, fg, fb] = fill
    const [kr, kg, kb] = this.ink
    const { dx, dy, fillWeight, inkWeight } = s
    let overClear = s.overClear.get(fillWord)
    if (!overClear) {
      overClear = new Uint32Array(dx.length)
      const one = new Uint8ClampedArray(4)
      const oneWord = new Uint32Array(one.buffer)
      for (let k = 0; k < dx.length; k++) {
        const wf = fillWeight[k]!
        const wk = inkWeight[k]!
        const a = wf + wk
        one[0] = (fr * wf + kr * wk) / a
        one[1] = (fg * wf + kg * wk) / a
        one[2] = (fb * wf + kb * wk) / a
        one[3] = a * 255
        overClear[k] = oneWord[0]!
      }
      s.overClear.set(fillWord, overClear)
    }
    for (let k = 0; k < dx.length; k++) {
      const x = cx + dx[k]!
      const y = cy + dy[k]!
      if (x < 0 || y < 0 || x >= width || y >= height) continue
      const p = y * width + x
      if (words[p] === 0) {
        words[p] = overClear[k]!
        continue
      }
      const wf = fillWeight[k]!
      const wk = inkWeight[k]!
      if (wk === 1) {
        words[p] = this.inkWord
        continue
      }
      // Source over destination, with straight alpha in the buffer.
      const a = wf + wk
      const q = p << 2
      const below = (data[q + 3]! / 255) * (1 - a)
      const alpha = a + below
      data[q] = (fr * wf + kr * wk + data[q]! * below) / alpha
      data[q + 1] = (fg * wf + kg * wk + data[q + 1]! * below) / alpha
      data[q + 2] = (fb * wf + kb * wk + data[q + 2]! * below) / alpha
      data[q + 3] = alpha * 255
    }
  }
}
