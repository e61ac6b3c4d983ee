import type { QuestionGroup } from '../../../shared/utils/schemas/questionnaire'
import { normal, prng } from '../../../shared/utils/random/prng'
import { DEMO_SEED, type DemoVisit } from './field-demo'

// The demo questionnaire's repeated group: a farm's plots (1–4 per visit), each with its size, soil and whether the
// seed was sown on it. Drawn from a stream of their own, so every other demo answer stays as it was. An adopting farm
// sowed the seed on at least one plot; a plot is likelier to be sown the smaller it is and on loam (invented
// coefficients, in README.md). A farm that did not adopt sowed it on none.

export const PLOT_TRUE_BETA = { intercept: 0.2, plot_size_ha: -0.5, loam: 0.45 } as const

const SOILS = [['sandy', 'Sandy'], ['loam', 'Loam'], ['clay', 'Clay']] as const

export function demoPlotsGroup(): QuestionGroup {
  return {
    key: 'plots',
    label: 'Plots',
    help: 'One row per plot the household cultivates this season.',
    // No fewest: visits recorded without plots (and the tablet tests that never open the group) stay valid.
    maxRows: 8,
    questions: [
      { key: 'plot_size_ha', label: 'Plot size', type: 'number', unit: 'ha', min: 0.01, max: 50, required: true },
      { key: 'plot_soil', label: 'Main soil of the plot', type: 'choice', required: true, options: SOILS.map(([value, label]) => ({ value, label })) },
      { key: 'plot_sown', label: 'Was the seed sown on this plot?', type: 'yesno', required: true },
      { key: 'plot_seed_kg', label: 'Seed sown on this plot', type: 'number', unit: 'kg', min: 0, max: 500, required: false, askWhen: { join: 'all', tests: [{ question: 'plot_sown', test: 'equals', value: true }] } }
    ]
  }
}

function uuidFrom(u: () => number): string {
  const hex = Array.from({ length: 32 }, () => Math.floor(u() * 16).toString(16))
  hex[12] = '4'
  hex[16] = '89ab'[Math.floor(u() * 4)]!
  const s = hex.join('')
  return `${s.slice(0, 8)}-${s.slice(8, 12)}-${s.slice(12, 16)}-${s.slice(16, 20)}-${s.slice(20)}`
}

/** The demo's visits with their plots added to the answers (the farm's land split into 1–4 plots). */
export function withDemoPlots<T extends { visits: DemoVisit[] }>(demo: T, seed = DEMO_SEED + 3): T {
  const u = prng(seed)
  for (const v of demo.visits) {
    const farmHa = Number(v.answers.farm_size_ha)
    const count = Math.min(4, 1 + Math.floor(u() * 4))
    const shares = Array.from({ length: count }, () => 0.3 + u())
    const total = shares.reduce((a, b) => a + b, 0)
    const plots = shares.map((s) => {
      const size = Math.max(0.01, Math.round(farmHa * s / total * 100) / 100)
      const soil = SOILS[Math.min(2, Math.floor(u() * 3))]![0]
      const index = PLOT_TRUE_BETA.intercept + PLOT_TRUE_BETA.plot_size_ha * size + (soil === 'loam' ? PLOT_TRUE_BETA.loam : 0)
      return { row: uuidFrom(u), plot_size_ha: size, plot_soil: soil, sown: index + normal(u) > 0, index }
    })
    // Adoption is the farm's answer: an adopting farm sowed its likeliest plot at least; the others none.
    if (v.adopted === 1 && !plots.some(p => p.sown)) plots.reduce((a, b) => (b.index > a.index ? b : a)).sown = true
    const answers: Record<string, unknown> = v.answers
    answers.plots = plots.map((p) => {
      const sown = v.adopted === 1 && p.sown
      return { row: p.row, plot_size_ha: p.plot_size_ha, plot_soil: p.plot_soil, plot_sown: sown, ...(sown ? { plot_seed_kg: Math.round(p.plot_size_ha * 8 * 10) / 10 } : {}) }
    })
  }
  return demo
}
