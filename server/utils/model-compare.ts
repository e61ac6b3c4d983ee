import { chiSquareSf } from '#shared/utils/stats'
import type { ModelRun } from '../db/models'

export interface NestedTest {
  restricted: number
  full: number
  chi2: number
  df: number
  p: number
}

/**
 * Side-by-side terms, fit statistics and likelihood-ratio tests for each pair of runs where one is nested
 * in the other: same link, same rows used (equal hashes), and every term of the smaller one in the larger.
 */
// Rows are named as on the results page: the engine's constant term reads as words, the trade term beside them.
const rowName = (c: { term: string, label: string }) => c.term === '(Intercept)' ? 'Baseline (intercept)' : c.label

export function compareRuns(runs: ModelRun[]) {
  const done = runs.filter(r => r.status === 'done' && r.results)
  const terms = [...new Set(done.flatMap(r => r.results!.coefficients.map(rowName)))]
  const effects = [...new Set(done.flatMap(r => r.results!.margins?.effects.map(e => e.label) ?? []))]
  const tests: NestedTest[] = []
  const notComparable: string[] = []
  for (const a of done) {
    for (const b of done) {
      if (a.id >= b.id) continue
      const ta = new Set(a.results!.coefficients.map(c => c.term))
      const tb = new Set(b.results!.coefficients.map(c => c.term))
      const [small, big] = ta.size <= tb.size ? [a, b] : [b, a]
      const [ts, tl] = ta.size <= tb.size ? [ta, tb] : [tb, ta]
      const nested = [...ts].every(t => tl.has(t)) && ts.size < tl.size
      if (!nested) continue
      if (small.results!.link !== big.results!.link) {
        notComparable.push(`Runs ${small.id} and ${big.id} use different links; compare them by AIC/BIC instead${small.results!.weights || big.results!.weights ? ' (not available with sampling weights)' : ''}.`)
        continue
      }
      if (small.results!.weights || big.results!.weights) {
        notComparable.push(`Runs ${small.id} and ${big.id} use sampling weights: a likelihood-ratio test is not valid then; read each run's Wald test.`)
        continue
      }
      if (small.usedRowsHash !== big.usedRowsHash) {
        notComparable.push(`Runs ${small.id} and ${big.id} were fitted on different visits, so no likelihood-ratio test.`)
        continue
      }
      const chi2 = Math.max(0, 2 * (big.results!.fit.loglik - small.results!.fit.loglik))
      const df = tl.size - ts.size
      tests.push({ restricted: small.id, full: big.id, chi2, df, p: chiSquareSf(chi2, df) })
    }
  }
  return {
    runs: done.map(r => ({
      id: r.id,
      link: r.results!.link,
      n: r.results!.fit.n,
      loglik: r.results!.fit.loglik,
      aic: r.results!.fit.aic,
      bic: r.results!.fit.bic,
      sameRowsAs: done.filter(o => o.id !== r.id && o.usedRowsHash === r.usedRowsHash).map(o => o.id),
      coefficients: Object.fromEntries(r.results!.coefficients.map(c => [rowName(c), { estimate: c.estimate, se: c.se, p: c.p }])),
      effects: Object.fromEntries((r.results!.margins?.effects ?? []).map(e => [e.label, { estimate: e.estimate, se: e.se, p: e.p }]))
    })),
    terms,
    effects,
    tests,
    notComparable
  }
}
