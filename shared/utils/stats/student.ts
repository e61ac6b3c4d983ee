/**
 * Student t and F distributions for design-based inference (degrees of freedom from the
 * survey design). Both rest on the regularised incomplete beta function I_x(a, b),
 * evaluated by its continued fraction (modified Lentz; the standard method, e.g.
 * Press et al., Numerical Recipes §6.4), using the symmetry I_x(a,b) = 1 − I_{1−x}(b,a)
 * where the fraction converges slowly.
 */
import { logGamma } from './distributions'

function betaFraction(a: number, b: number, x: number): number {
  const TINY = 1e-300
  let c = 1
  let d = 1 - (a + b) * x / (a + 1)
  if (Math.abs(d) < TINY) d = TINY
  d = 1 / d
  let h = d
  for (let m = 1; m <= 500; m++) {
    const m2 = 2 * m
    let aa = m * (b - m) * x / ((a + m2 - 1) * (a + m2))
    d = 1 + aa * d
    if (Math.abs(d) < TINY) d = TINY
    c = 1 + aa / c
    if (Math.abs(c) < TINY) c = TINY
    d = 1 / d
    h *= d * c
    aa = -(a + m) * (a + b + m) * x / ((a + m2) * (a + m2 + 1))
    d = 1 + aa * d
    if (Math.abs(d) < TINY) d = TINY
    c = 1 + aa / c
    if (Math.abs(c) < TINY) c = TINY
    d = 1 / d
    const del = d * c
    h *= del
    if (Math.abs(del - 1) < 1e-15) break
  }
  return h
}

/** Regularised incomplete beta I_x(a, b). */
export function incompleteBeta(x: number, a: number, b: number): number {
  if (x <= 0) return 0
  if (x >= 1) return 1
  const lnFront = logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log1p(-x)
  if (x < (a + 1) / (a + b + 2)) return Math.exp(lnFront) * betaFraction(a, b, x) / a
  return 1 - Math.exp(lnFront) * betaFraction(b, a, 1 - x) / b
}

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
