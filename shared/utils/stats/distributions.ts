/**
 * Tail probabilities for tests: two-sided normal p-values and chi-square upper tails.
 */
import { normCdf } from './normal'

/** Two-sided p-value 2Φ(−|z|). */
export function twoSidedP(z: number): number {
  return 2 * normCdf(-Math.abs(z))
}

/** 97.5% standard normal quantile, for 95% intervals. */
export const Z975 = 1.959963984540054

/** log Γ(x) for x > 0 (Lanczos, g = 7, n = 9; relative error < 1e-14). */
export function logGamma(x: number): number {
  const c = [0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313,
    -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6,
    1.5056327351493116e-7]
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - logGamma(1 - x)
  const xx = x - 1
  let a = c[0]!
  const t = xx + 7.5
  for (let i = 1; i < 9; i++) a += c[i]! / (xx + i)
  return 0.5 * Math.log(2 * Math.PI) + (xx + 0.5) * Math.log(t) - t + Math.log(a)
}

/**
 * Regularised upper incomplete gamma Q(a, x) = Γ(a, x)/Γ(a): series for x < a + 1,
 * Lentz continued fraction otherwise (so tiny upper tails keep their relative accuracy).
 */
export function gammaQ(a: number, x: number): number {
  if (x <= 0) return 1
  const lnPre = -x + a * Math.log(x) - logGamma(a)
  if (x < a + 1) {
    let sum = 1 / a
    let term = sum
    for (let n = 1; n < 1000; n++) {
      term *= x / (a + n)
      sum += term
      if (Math.abs(term) < Math.abs(sum) * 1e-16) break
    }
    return 1 - Math.exp(lnPre) * sum
  }
  const tiny = 1e-300
  let b = x + 1 - a
  let c = 1 / tiny
  let d = 1 / b
  let h = d
  for (let i = 1; i < 1000; i++) {
    const an = -i * (i - a)
    b += 2
    d = an * d + b
    if (Math.abs(d) < tiny) d = tiny
    c = b + an / c
    if (Math.abs(c) < tiny) c = tiny
    d = 1 / d
    const del = d * c
    h *= del
    if (Math.abs(del - 1) < 1e-16) break
  }
  return Math.exp(lnPre) * h
}

/** Upper tail P(χ²_df > x). */
export function chiSquareSf(x: number, df: number): number {
  if (!(x > 0)) return 1
  return gammaQ(df / 2, x / 2)
}

/**
 * Regularised incomplete beta I_x(a, b) by its continued fraction (modified Lentz), using the symmetry
 * I_x(a, b) = 1 − I_{1−x}(b, a) where the fraction converges slowly (the standard method, e.g. Press et al.,
 * Numerical Recipes, §6.4).
 */
export function betaIncomplete(x: number, a: number, b: number): number {
  if (x <= 0) return 0
  if (x >= 1) return 1
  const front = Math.exp(logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log(1 - x))
  if (x > (a + 1) / (a + b + 2)) return 1 - betaIncomplete(1 - x, b, a)
  const tiny = 1e-300
  let c = 1
  let d = 1 - ((a + b) * x) / (a + 1)
  if (Math.abs(d) < tiny) d = tiny
  d = 1 / d
  let f = d
  for (let m = 1; m <= 500; m++) {
    const m2 = 2 * m
    let num = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2))
    d = 1 + num * d
    if (Math.abs(d) < tiny) d = tiny
    c = 1 + num / c
    if (Math.abs(c) < tiny) c = tiny
    d = 1 / d
    f *= d * c
    num = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1))
    d = 1 + num * d
    if (Math.abs(d) < tiny) d = tiny
    c = 1 + num / c
    if (Math.abs(c) < tiny) c = tiny
    d = 1 / d
    const delta = d * c
    f *= delta
    if (Math.abs(delta - 1) < 1e-15) break
  }
  return (front * f) / a
}

/** Upper tail P(F > f) of the F distribution with (d1, d2) degrees of freedom. */
export function fSf(f: number, d1: number, d2: number): number {
  if (!(f > 0)) return 1
  return betaIncomplete(d2 / (d2 + d1 * f), d2 / 2, d1 / 2)
}
