import { describe, expect, it } from 'vitest'
import { ADOPTION_PALETTE, GAP_PALETTE, colourFor, equalBreaks, legendLabels, luminance } from '../../shared/utils/map-palette'

describe('map palettes', () => {
  it('the adoption palette darkens at every step, so its order reads without hue', () => {
    const l = ADOPTION_PALETTE.map(luminance)
    // Each class at least 15 % darker than the one before (relative luminance).
    for (let i = 1; i < l.length; i++) expect(l[i]!).toBeLessThan(l[i - 1]! * 0.85)
    // The ends differ by at least 10:1 in contrast (WCAG contrast ratio (L1 + 0.05) / (L2 + 0.05)).
    expect((l[0]! + 0.05) / (l[l.length - 1]! + 0.05)).toBeGreaterThan(10)
  })

  it('the gap palette is lightest in the middle and darkens towards both ends', () => {
    const l = GAP_PALETTE.map(luminance)
    const mid = Math.floor(l.length / 2)
    for (let i = 1; i <= mid; i++) expect(l[i]!).toBeGreaterThan(l[i - 1]!)
    for (let i = mid + 1; i < l.length; i++) expect(l[i]!).toBeLessThan(l[i - 1]!)
  })

  it('puts values in equal-width classes with matching legend labels', () => {
    const classes = equalBreaks(0, 0.7, ADOPTION_PALETTE)
    expect(classes.breaks).toHaveLength(6)
    expect(colourFor(0, classes)).toBe(ADOPTION_PALETTE[0])
    expect(colourFor(0.65, classes)).toBe(ADOPTION_PALETTE[6])
    expect(colourFor(0.7, classes)).toBe(ADOPTION_PALETTE[6])
    expect(colourFor(0.15, classes)).toBe(ADOPTION_PALETTE[1])
    expect(colourFor(null, classes)).toBe('#9a9a9a')
    expect(legendLabels(classes, 0, 0.7)).toEqual(['0–10', '10–20', '20–30', '30–40', '40–50', '50–60', '60–70'])
  })
})
