import { describe, expect, it } from 'vitest'
import type { MapVillage } from '../../shared/types/overview'

// village-layer imports Leaflet, which needs a window; the tooltip itself needs only createElement.
;

(globalThis as Record<string, unknown>).window ??= { devicePixelRatio: 1 }
;(globalThis as Record<string, unknown>).navigator ??= { userAgent: 'node', platform: '' }
;(globalThis as Record<string, unknown>).document ??= { documentElement: { style: {} }, createElement: () => ({ getContext: () => null }) }
const { villageTooltip, villageTooltipLines } = await import('../../app/utils/village-layer')

// A document whose elements keep only text: any attempt to write markup throws, so a tooltip built from a string
// of HTML fails this test.
class TextElement {
  children: TextElement[] = []
  text = ''
  constructor(readonly tag: string) {}
  set textContent(value: string) { this.text = value }
  get textContent() { return this.text + this.children.map(c => c.textContent).join('') }
  set innerHTML(_value: string) { throw new Error('markup written into the tooltip') }
  appendChild(child: TextElement) {
    this.children.push(child)
    return child
  }

  insertAdjacentHTML() { throw new Error('markup written into the tooltip') }
}
const doc = { createElement: (tag: string) => new TextElement(tag) } as unknown as Pick<Document, 'createElement'>

const payload = '<img src=x onerror=window.__xss=1>"><script>window.__xss=1</script>'
const village = (over: Partial<MapVillage> = {}): MapVillage => ({
  code: 'KS-1', name: payload, lat: 0, lon: 0, boundary: null, visits: 12, suppressed: false, observedRate: 0.25,
  predicted: { estimate: 0.3, ciLow: 0.2, ciHigh: 0.4 }, scenarios: {}, ...over
})

describe('village tooltip', () => {
  it('holds a village name as text, the name first and bold', () => {
    const box = villageTooltip(village(), doc) as unknown as TextElement
    expect(box.children[0]!.tag).toBe('strong')
    expect(box.children[0]!.textContent).toBe(payload)
    expect(box.children.map(c => c.textContent)).toEqual(villageTooltipLines(village()))
  })

  it('gives the figures of a shown village and only the name of a hidden one', () => {
    expect(villageTooltipLines(village())).toEqual([payload, '12 visits', 'Observed adoption 25.0 %', 'Predicted 30.0 % (95% CI 20.0 %–40.0 %)'])
    expect(villageTooltipLines(village({ suppressed: true, visits: null, observedRate: null, predicted: null }))).toEqual([payload, 'Too few visits to show'])
  })
})
