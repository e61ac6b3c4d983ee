/**
 * Gauss–Hermite rules: ∫ g(z) e^{−z²} dz ≈ Σ_q w_q g(z_q), exact for polynomials g of degree ≤ 2Q − 1.
 *
 * Nodes are the roots of the Hermite polynomial H_Q, found by Newton's method on the
 * normalised recurrence p_0 = π^{−1/4}, p_1 = √2 z p_0, p_j = √(2/j) z p_{j−1} − √((j−1)/j) p_{j−2}
 * (normalised so that nothing overflows up to Q ≈ 100), with w_q = 2 / (p'_Q(z_q))².
 * Starting guesses are the usual asymptotic ones (largest root first, then each from the
 * previous two). Own code because it is ten lines and the product's core rests on it; the
 * unit tests check it against moments of the normal distribution.
 */
import { EngineInputError } from './errors'

export interface HermiteRule {
  /** Nodes z_q, ascending. */
  nodes: Float64Array
  /** Weights w_q for the weight function e^{−z²} (they sum to √π). */
  weights: Float64Array
}

const cache = new Map<number, HermiteRule>()

export function gaussHermite(points: number): HermiteRule {
  if (!Number.isInteger(points) || points < 1 || points > 100) {
    throw new EngineInputError('invalid_spec', `quadrature points must be a whole number from 1 to 100 (got ${points})`)
  }
  const hit = cache.get(points)
  if (hit) return hit
  const n = points
  const x = new Float64Array(n)
  const w = new Float64Array(n)
  const PIM4 = 0.7511255444649425 // π^{−1/4}
  const m = Math.floor((n + 1) / 2)
  let z = 0
  for (let i = 0; i < m; i++) {
    if (i === 0) z = Math.sqrt(2 * n + 1) - 1.85575 * Math.pow(2 * n + 1, -0.16667)
    else if (i === 1) z -= 1.14 * Math.pow(n, 0.426) / z
    else if (i === 2) z = 1.86 * z - 0.86 * x[0]!
    else if (i === 3) z = 1.91 * z - 0.91 * x[1]!
    else z = 2 * z - x[i - 2]!
    let pp = 0
    for (let iter = 0; iter < 100; iter++) {
      let p1 = PIM4
      let p2 = 0
      for (let j = 1; j <= n; j++) {
        const p3 = p2
        p2 = p1
        p1 = z * Math.sqrt(2 / j) * p2 - Math.sqrt((j - 1) / j) * p3
      }
      pp = Math.sqrt(2 * n) * p2
      const z1 = z
      z = z1 - p1 / pp
      if (Math.abs(z - z1) <= 1e-15 * Math.max(1, Math.abs(z))) break
    }
    x[i] = z
    x[n - 1 - i] = -z
    w[i] = 2 / (pp * pp)
    w[n - 1 - i] = w[i]!
  }
  // Newton above ran from the largest root down; store ascending.
  const nodes = Float64Array.from(x).reverse()
  const weights = Float64Array.from(w).reverse()
  if (n % 2 === 1) nodes[m - 1] = 0
  const rule = { nodes, weights }
  cache.set(points, rule)
  return rule
}

/**
 * The same rule for a standard normal variable: E[g(u)] ≈ Σ_q ω_q g(u_q),
 * u_q = √2 z_q, ω_q = w_q / √π.
 */
export function normalRule(points: number): HermiteRule {
  const { nodes, weights } = gaussHermite(points)
  return {
    nodes: nodes.map(z => Math.SQRT2 * z),
    weights: weights.map(v => v / Math.sqrt(Math.PI))
  }
}
