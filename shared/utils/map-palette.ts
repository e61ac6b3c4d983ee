// Furrowcast's sequential palette for adoption shares: from pale straw to deep field green. Lightness falls
// steadily from class to class, so the order reads without hue (colour-blind viewers, grey print).
export const ADOPTION_PALETTE = ['#f7f1d5', '#cfe2a0', '#9cc98a', '#63a574', '#3a8062', '#1f5c4c', '#0d3833'] as const

// A diverging palette for the gap (observed − predicted): amber below the prediction, green above.
export const GAP_PALETTE = ['#8a4b08', '#c98a2e', '#ecd3a0', '#f2f0e6', '#b9d9c3', '#5fa47c', '#1f6450'] as const

export interface ClassBreaks {
  /** Upper bounds of each class except the last, ascending. */
  breaks: number[]
  colours: readonly string[]
}

/** Equal-width classes over [min, max]; one colour per class. */
export function equalBreaks(min: number, max: number, colours: readonly string[]): ClassBreaks {
  const k = colours.length
  const step = (max - min) / k
  return { breaks: Array.from({ length: k - 1 }, (_, i) => min + step * (i + 1)), colours }
}

export function colourFor(value: number | null, classes: ClassBreaks): string {
  if (value === null || !Number.isFinite(value)) return '#9a9a9a'
  const i = classes.breaks.findIndex(b => value < b)
  return classes.colours[i === -1 ? classes.colours.length - 1 : i]!
}

/** Relative luminance (WCAG 2) of a #rrggbb colour. */
export function luminance(hex: string): number {
  const channel = (i: number) => {
    const c = Number.parseInt(hex.slice(1 + 2 * i, 3 + 2 * i), 16) / 255
    return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4
  }
  return 0.2126 * channel(0) + 0.7152 * channel(1) + 0.0722 * channel(2)
}

/** Legend labels for a set of breaks, as percentages. */
export function legendLabels(classes: ClassBreaks, min: number, max: number, scale = 100): string[] {
  const edges = [min, ...classes.breaks, max]
  return classes.colours.map((_, i) => `${Math.round(edges[i]! * scale)}–${Math.round(edges[i + 1]! * scale)}`)
}
