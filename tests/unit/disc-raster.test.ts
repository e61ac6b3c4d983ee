import { describe, expect, it } from 'vitest'
import { DiscRaster, rgbOf } from '../../app/utils/disc-raster'

const W = 80
const H = 60
const INK = rgbOf('#1b1d17')
const FILL = rgbOf('#63a574')

function buffer() {
  return new Uint8ClampedArray(W * H * 4)
}
const pixel = (data: Uint8ClampedArray, x: number, y: number) => [...data.subarray((y * W + x) * 4, (y * W + x) * 4 + 4)]

describe('disc raster', () => {
  it('fills the inside with the colour, draws a one-pixel outline in ink at the radius and leaves the outside clear', () => {
    const data = buffer()
    new DiscRaster(data, W, H, 1, INK).disc(40, 30, 10, FILL)
    expect(pixel(data, 40, 30)).toEqual([...FILL, 255])
    expect(pixel(data, 45, 27)).toEqual([...FILL, 255])
    // Radius 10 with a 1-px line, the centre on pixel (40, 30)'s centre: the line is the pixel 10 px right of it.
    expect(pixel(data, 50, 30)).toEqual([...INK, 255])
    expect(pixel(data, 40, 20)).toEqual([...INK, 255])
    expect(pixel(data, 52, 30)).toEqual([0, 0, 0, 0])
    expect(pixel(data, 40, 8)).toEqual([0, 0, 0, 0])
    // The area covered is that of a circle of radius ~10.5 (fill and line), within a pixel of rim.
    let covered = 0
    for (let i = 3; i < data.length; i += 4) covered += data[i]! / 255
    expect(covered).toBeGreaterThan(Math.PI * 10 ** 2)
    expect(covered).toBeLessThan(Math.PI * 11.5 ** 2)
  })

  it('draws a later disc over an earlier one, and blends its rim over what is below', () => {
    const data = buffer()
    const raster = new DiscRaster(data, W, H, 1, INK)
    raster.disc(30, 30, 10, rgbOf('#f7f1d5'))
    raster.disc(38, 30, 6, FILL)
    expect(pixel(data, 38, 30)).toEqual([...FILL, 255])
    expect(pixel(data, 24, 30)).toEqual([0xF7, 0xF1, 0xD5, 255])
    // An anti-aliased rim pixel of the upper disc over the lower disc stays opaque.
    for (let x = 0; x < W; x++) for (let y = 0; y < H; y++) if (Math.hypot(x + 0.5 - 30, y + 0.5 - 30) < 9) expect(pixel(data, x, y)[3]).toBe(255)
  })

  it('dashes a ring: ink where a dash starts (angle 0) and gaps along it', () => {
    const data = buffer()
    new DiscRaster(data, W, H, 1, INK).dashedRing(40, 30, 14, 3, [5, 3])
    expect(pixel(data, 54, 30)).toEqual([...INK, 255])
    expect(pixel(data, 55, 30)).toEqual([...INK, 255])
    expect(pixel(data, 40, 30)).toEqual([0, 0, 0, 0])
    // Around the ring: both inked and clear pixels at its radius.
    let inked = 0
    let clear = 0
    for (let k = 0; k < 360; k++) {
      const a = (k * Math.PI) / 180
      const [, , , alpha] = pixel(data, Math.floor(40 + 14 * Math.cos(a)), Math.floor(30 + 14 * Math.sin(a)))
      if (alpha === 255) inked++
      if (alpha === 0) clear++
    }
    expect(inked).toBeGreaterThan(150)
    expect(clear).toBeGreaterThan(60)
  })

  it('scales radius and line with the device pixel ratio and clips at the edges without wrapping', () => {
    const data = buffer()
    new DiscRaster(data, W, H, 2, INK).disc(2, 30, 10, FILL)
    // Ratio 2: radius 20 device px, a 2-px line (on the two whole pixels 20 and 21 px from the centre pixel).
    expect(pixel(data, 18, 30)).toEqual([...FILL, 255])
    expect(pixel(data, 22, 30)).toEqual([...INK, 255])
    expect(pixel(data, 23, 30)).toEqual([...INK, 255])
    expect(pixel(data, 25, 30)).toEqual([0, 0, 0, 0])
    // Nothing drawn at the right edge of the row before (no wrap-around from x < 0).
    expect(pixel(data, W - 1, 29)).toEqual([0, 0, 0, 0])
  })

  it('refuses a colour that is not #rrggbb', () => {
    expect(() => rgbOf('red')).toThrow()
  })
  it('skips only discs wholly hidden under later ones: the pixels are exactly those of drawing every disc', () => {
    // A crowded view, as 20,000 villages in one district are: thousands of discs of mixed sizes and colours, some
    // crossing the buffer's edges, at device pixel ratios 1 and 2.
    const colours = ['#f7f1d5', '#63a574', '#d99a1e', '#24523a', '#b3261e'].map(rgbOf)
    for (const scale of [1, 2]) {
      let seed = 7
      const u = () => (seed = (seed * 16807) % 2147483647) / 2147483647
      const n = 3000
      const xs = Float64Array.from({ length: n }, () => -10 + (W + 20) * u())
      const ys = Float64Array.from({ length: n }, () => -10 + (H + 20) * u())
      const radii = Float64Array.from({ length: n }, () => 1 + 9 * u())
      const fills = Array.from({ length: n }, () => colours[Math.floor(u() * colours.length)]!)
      const all = buffer()
      const every = new DiscRaster(all, W, H, scale, INK)
      for (let i = 0; i < n; i++) every.disc(xs[i]!, ys[i]!, radii[i]!, fills[i]!)
      const some = buffer()
      const culled = new DiscRaster(some, W, H, scale, INK)
      const visible = culled.visibleDiscs(xs, ys, radii, n)
      for (const i of visible) culled.disc(xs[i]!, ys[i]!, radii[i]!, fills[i]!)
      expect(visible.length).toBeLessThan(n / 2)
      expect([...visible]).toEqual([...visible].sort((a, b) => a - b))
      expect(Buffer.from(some).equals(Buffer.from(all))).toBe(true)
    }
  })
})
