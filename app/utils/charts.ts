import { BarElement, CategoryScale, Chart, Legend, LinearScale, LineElement, PointElement, Tooltip } from 'chart.js'

// Shared pieces of the model charts. Colours come from the Furrowcast palette; the pair differs in lightness
// as well as hue, so it stays readable for colour-blind viewers and in grey print.
// Only the Chart.js parts the model charts use, registered when the first chart component loads this module:
// registering them in a plugin put Chart.js into every page's first load, the tablet's included.
Chart.register(BarElement, CategoryScale, Legend, LinearScale, LineElement, PointElement, Tooltip)
Chart.defaults.font.family = '"Atkinson Hyperlegible", system-ui, sans-serif'
Chart.defaults.font.size = 14
Chart.defaults.color = '#1b1d17'

export const CHART = {
  primary: '#24523a',
  primarySoft: 'rgba(36, 82, 58, 0.25)',
  accent: '#d99a1e',
  accentSoft: 'rgba(217, 154, 30, 0.35)',
  reference: '#8a8d80'
} as const

/** The dashed 45° line both probability charts draw for reference. */
export function diagonal(label: string) {
  return { label, data: [{ x: 0, y: 0 }, { x: 1, y: 1 }], borderColor: CHART.reference, borderDash: [6, 6], pointRadius: 0 }
}

/** Options for a chart whose two axes are probabilities on [0, 1]. */
export function unitSquareOptions(xTitle: string, yTitle: string) {
  return {
    responsive: true,
    maintainAspectRatio: false,
    parsing: false as const,
    scales: {
      x: { type: 'linear' as const, min: 0, max: 1, title: { display: true, text: xTitle } },
      y: { min: 0, max: 1, title: { display: true, text: yTitle } }
    }
  }
}
