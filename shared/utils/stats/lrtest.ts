/**
 * Likelihood-ratio test between two nested fits on the same rows:
 * LR = 2(ℓ_full − ℓ_restricted) ~ χ²(K_full − K_restricted).
 */
import type { Design } from './design'
import { chiSquareSf } from './distributions'
import { EngineInputError } from './errors'
import type { FitResult } from './fit'

export interface LrTestResult {
  statistic: number
  df: number
  p: number
  /** Terms in the full model that the restricted model leaves out. */
  testedTerms: string[]
}

export function lrTest(restricted: { design: Design, fit: FitResult }, full: { design: Design, fit: FitResult }): LrTestResult {
  const r = restricted.design
  const f = full.design
  if (r.n !== f.n) throw new EngineInputError('not_nested', `the models use different numbers of rows (${r.n} and ${f.n}); refit on the same rows`)
  for (let i = 0; i < r.n; i++) {
    if (r.rowIndex[i] !== f.rowIndex[i] || r.y[i] !== f.y[i]) {
      throw new EngineInputError('not_nested', 'the models use different rows or outcomes; refit on the same rows')
    }
    if ((r.w ? r.w[i] : 1) !== (f.w ? f.w[i] : 1)) throw new EngineInputError('not_nested', 'the models use different weights')
  }
  if (restricted.fit.link !== full.fit.link) throw new EngineInputError('not_nested', 'the models use different links, so they are not nested')
  const fullTerms = new Set(f.plan.terms.map(t => t.name))
  const missing = r.plan.terms.filter(t => !fullTerms.has(t.name)).map(t => t.name)
  if (missing.length) throw new EngineInputError('not_nested', `the restricted model has terms the full model lacks: ${missing.join(', ')}`, missing)
  const restrictedTerms = new Set(r.plan.terms.map(t => t.name))
  const tested = f.plan.terms.filter(t => !restrictedTerms.has(t.name)).map(t => t.name)
  const df = f.k - r.k
  if (df <= 0) throw new EngineInputError('not_nested', 'the full model has no terms beyond the restricted one')
  const stat = 2 * (full.fit.loglik - restricted.fit.loglik)
  return { statistic: stat, df, p: chiSquareSf(Math.max(stat, 0), df), testedTerms: tested }
}
