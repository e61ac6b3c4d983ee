/**
 * Student t and F distributions for design-based inference (degrees of freedom from the
 * survey design). Both rest on the regularised incomplete beta function I_x(a, b),
 * evaluated by its continued fraction (modified Lentz; the standard method, e.g.
 * Press et al., Numerical Recipes §6.4), using the symmetry I_x(a,b) = 1 − I_{1−x}(b,a)
 * where the fraction converges slowly.
 */
import { betaIncomplete } from './distributions'

/** Regularised incomplete beta I_x(a, b): the engine's one implementation lives in distributions.ts. */
export const incompleteBeta = betaIncomplete

/** Two-sided p-value P(|T| ≥ |t|) for Student t on df degrees of freedom. */
export function tTwoSidedP(t: number, df: number): number {
  if (!Number.isFinite(t)) return 0
  return incompleteBeta(df / (df + t * t), df / 2, 0.5)
}

/** Upper 1 − α/2 quantile of t on df, by bisection on the two-sided p (α = 0.05 by default). */
export function tQuantile(df: number, alpha = 0.05): number {
  let lo = 0
  let hi = 1e6
  for (let i = 0; i < 200; i++) {
    const mid = 0.5 * (lo + hi)
    if (tTwoSidedP(mid, df) > alpha) lo = mid
    else hi = mid
    if (hi - lo < 1e-13 * Math.max(1, mid)) break
  }
  return 0.5 * (lo + hi)
}
