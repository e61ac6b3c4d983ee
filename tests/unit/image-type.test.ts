import { describe, expect, it } from 'vitest'
import { photoTypeOf } from '../../server/utils/image-type'

const bytes = (...b: number[]) => new Uint8Array(b)
const ascii = (s: string) => new TextEncoder().encode(s)

describe('photo type by its bytes', () => {
  it.each([
    ['JPEG', bytes(0xFF, 0xD8, 0xFF, 0xE0, 0, 0x10), 'image/jpeg'],
    ['PNG', bytes(0x89, 0x50, 0x4E, 0x47, 0x0D, 0x0A, 0x1A, 0x0A, 0, 0), 'image/png'],
    ['WebP', new Uint8Array([...ascii('RIFF'), 0x24, 0, 0, 0, ...ascii('WEBPVP8 ')]), 'image/webp']
  ])('recognises %s', (_what, body, type) => {
    expect(photoTypeOf(body)).toBe(type)
  })

  it.each([
    ['an HTML page', ascii('<!doctype html><script>alert(1)</script>')],
    ['an SVG image (it can hold script)', ascii('<svg xmlns="http://www.w3.org/2000/svg"><script>1</script></svg>')],
    ['a RIFF file that is not WebP (WAV)', new Uint8Array([...ascii('RIFF'), 0, 0, 0, 0, ...ascii('WAVE')])],
    ['a truncated JPEG marker', bytes(0xFF, 0xD8)],
    ['a PDF', ascii('%PDF-1.7')],
    ['nothing', bytes()]
  ])('refuses %s', (_what, body) => {
    expect(photoTypeOf(body)).toBeNull()
  })
})
