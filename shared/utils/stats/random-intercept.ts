/**
 * Village random-intercept binary model by adaptive Gauss–Hermite quadrature (AGHQ).
 *
 * Model: P(y_ij = 1 | x_ij, u_j) = F(x_ij'β + σ u_j), u_j ~ N(0, 1) independent across
 * villages j (so the village effect σu_j has standard deviation σ). The marginal
 * log-likelihood is
 *   ℓ(β, σ) = Σ_j log L_j,  L_j = ∫ exp(h_j(u)) du,
 *   h_j(u) = Σ_{i∈j} ℓ_i(x_ij'β + σu) − u²/2 − ½ log 2π,
 * with ℓ_i(η) = y log F(η) + (1 − y) log(1 − F(η)).
 * AGHQ (Liu & Pierce 1994): with û_j the mode of h_j and τ_j = (−h_j''(û_j))^{−1/2},
 *   L_j ≈ √2 τ_j Σ_q w_q exp(h_j(û_j + √2 τ_j z_q) + z_q²)
 * for the Gauss–Hermite rule (z_q, w_q) of `quadrature.ts`. One point is the Laplace
 * approximation; the rule is exact as the points grow.
 *
 * Maximisation: Newton–Raphson on θ = (β, σ) with step halving on the AGHQ ℓ. At each
 * iterate the nodes u_jq = û_j + √2 τ_j z_q are adapted to θ and then held fixed to get
 * the score and Hessian of the quadrature sum (p_jq = posterior weight of node q,
 * d_jq = Σ_i ℓ'_iq (x_ij, u_jq)):
 *   g = Σ_j Σ_q p_jq d_jq,
 *   H = Σ_j [ Σ_q p_jq (Σ_i ℓ''_iq (x_ij, u_jq)(x_ij, u_jq)' + d_jq d_jq') − ḡ_j ḡ_j' ].
 * Holding the nodes fixed changes the derivatives only by the quadrature error, so the
 * root differs from the AGHQ maximum by far less than the standard errors (the tests
 * measure it against an outside implementation).
 *
 * Own code rather than a general mixed-model library: this is the product's core model,
 * it has to run in the browser, and a pass vectorised over typed arrays (rows of a village
 * contiguous, all nodes of a row together) is what makes 10⁵ rows × 12 points quick.
 */
import type { Design } from './design'
import { EngineInputError, type EngineWarning } from './errors'
import { fitBinary } from './fit'
import { choleskyInPlace, choleskySolve, invertSpd } from './linalg'
import { getLink, type Link, type LinkName } from './links'
import { gaussHermite } from './quadrature'
import type { IterationRecord } from './types'

const HALF_LOG_2PI = 0.9189385332046728

export interface RandomInterceptOptions {
  /** Gauss–Hermite points per village (default 12). */
  quadPoints?: number
  maxIterations?: number
  /** Starting values (β, σ), length k + 1. */
  start?: ArrayLike<number>
}

/** Rows regrouped so that each village's rows are contiguous. */
export interface VillageLayout {
  n: number
  k: number
  G: number
  /** Row-major, rows in village order. */
  X: Float64Array
  y: Float64Array
  /** Rows of village j are start[j] .. start[j+1] − 1 (in the regrouped order). */
  start: Int32Array
  /** Regrouped position → design row. */
  order: Int32Array
  maxSize: number
}

export function layoutByVillage(design: Design): VillageLayout {
  const { n, k, X, y, cluster } = design
  if (!cluster) throw new EngineInputError('invalid_spec', 'a village random intercept needs a village (cluster) column')
  let G = design.clusterLabels.length
  for (let i = 0; i < n; i++) G = Math.max(G, cluster[i]! + 1)
  const count = new Int32Array(G + 1)
  for (let i = 0; i < n; i++) count[cluster[i]! + 1]!++
  for (let g = 0; g < G; g++) count[g + 1]! += count[g]!
  const start = Int32Array.from(count)
  const fill = Int32Array.from(count)
  const order = new Int32Array(n)
  for (let i = 0; i < n; i++) order[fill[cluster[i]!]!++] = i
  const Xs = new Float64Array(n * k)
  const ys = new Float64Array(n)
  let maxSize = 0
  for (let g = 0; g < G; g++) maxSize = Math.max(maxSize, start[g + 1]! - start[g]!)
  for (let r = 0; r < n; r++) {
    const i = order[r]!
    Xs.set(X.subarray(i * k, (i + 1) * k), r * k)
    ys[r] = y[i]!
  }
  return { n, k, G, X: Xs, y: ys, start, order, maxSize }
}

/** Result of one quadrature pass at θ. */
export interface QuadraturePass {
  loglik: number
  /** Score of the quadrature sum, length k + 1 (β then σ); empty without derivatives. */
  gradient: Float64Array
  /** Hessian, (k+1)×(k+1) row-major; empty without derivatives. */
  hessian: Float64Array
  /** Conditional modes û_j (standard-normal scale). */
  modes: Float64Array
  /** τ_j = (−h_j''(û_j))^{−1/2}. */
  scales: Float64Array
  /** Posterior weight of node q in village j, G×Q row-major. */
  posterior: Float64Array
}

/**
 * One AGHQ pass: modes and scales per village, then ℓ (and with `derivatives` the score
 * and Hessian above). `warm` holds modes to start the per-village Newton search from.
 */
export function quadraturePass(
  lay: VillageLayout, link: Link, theta: ArrayLike<number>, points: number, derivatives: boolean, warm?: Float64Array
): QuadraturePass {
  const { k, G, X, y, start, maxSize } = lay
  const K = k + 1
  const sigma = theta[k]!
  const { nodes, weights } = gaussHermite(points)
  const Q = points
  const logW = nodes.map((z, q) => Math.log(weights[q]!) + z * z)
  const eta0 = new Float64Array(maxSize)
  const L1 = new Float64Array(maxSize * Q)
  const L2 = new Float64Array(maxSize * Q)
  const uq = new Float64Array(Q)
  const a = new Float64Array(Q)
  const p = new Float64Array(Q)
  const Gq = new Float64Array(Q * K)
  const gbar = new Float64Array(K)
  const sx2 = new Float64Array(k)
  const swpx = new Float64Array(k)
  const du = new Float64Array(K)
  const dlogTau = new Float64Array(K)
  const S1q = new Float64Array(Q)
  const t = new Float64Array(3)
  const grad = derivatives ? new Float64Array(K) : new Float64Array(0)
  const H = derivatives ? new Float64Array(K * K) : new Float64Array(0)
  const modes = new Float64Array(G)
  const scales = new Float64Array(G)
  const posterior = new Float64Array(G * Q)
  const b = Float64Array.from({ length: k }, (_, j) => theta[j]!)
  let ll = 0
  for (let g = 0; g < G; g++) {
    const s = start[g]!
    const m = start[g + 1]! - s
    if (m === 0) continue
    for (let r = 0; r < m; r++) {
      const off = (s + r) * k
      let e = 0
      for (let j = 0; j < k; j++) e += X[off + j]! * b[j]!
      eta0[r] = e
    }
    // Conditional mode of the strictly concave h_j (log-concave links) by Newton; the
    // step is capped so that a poor start cannot throw u far into the tail.
    let u = warm ? warm[g]! : 0
    let hpp = -1
    for (let it = 0; it < 60; it++) {
      let s1 = 0
      let s2 = 0
      for (let r = 0; r < m; r++) {
        link.obsTerms(eta0[r]! + sigma * u, y[s + r]!, t)
        s1 += t[1]!
        s2 += t[2]!
      }
      const hp = sigma * s1 - u
      hpp = sigma * sigma * s2 - 1
      let step = -hp / hpp
      if (step > 4) step = 4
      else if (step < -4) step = -4
      u += step
      if (Math.abs(step) < 1e-11 * (1 + Math.abs(u))) break
    }
    // Scale from the Fisher weights W = f²/(F(1 − F)) at the mode (as PIRLS uses them;
    // for the logit they equal the observed curvature). Any positive scale gives a valid
    // rule; this one makes the approximation the same as the reference implementation's.
    let sw = 0
    let swp = 0
    let s1 = 0
    let s2 = 0
    if (derivatives) {
      sx2.fill(0)
      swpx.fill(0)
    }
    for (let r = 0; r < m; r++) {
      const e = eta0[r]! + sigma * u
      link.obsTerms(e, 1, t)
      const lam1 = t[1]!
      link.obsTerms(e, 0, t)
      const lam0 = -t[1]!
      const W = lam1 * lam0
      sw += W
      if (!derivatives) continue
      const yr = y[s + r]!
      const l1 = yr === 1 ? lam1 : -lam0
      const l2 = yr === 1 ? lam1 * link.dLogPdf(e) - lam1 * lam1 : -lam0 * link.dLogPdf(e) - lam0 * lam0
      const Wp = W * (2 * link.dLogPdf(e) - lam1 + lam0)
      s1 += l1
      s2 += l2
      swp += Wp
      const off = (s + r) * k
      for (let j = 0; j < k; j++) {
        sx2[j]! += l2 * X[off + j]!
        swpx[j]! += Wp * X[off + j]!
      }
    }
    const D = sigma * sigma * sw + 1
    const tau = 1 / Math.sqrt(D)
    modes[g] = u
    scales[g] = tau
    const spread = Math.SQRT2 * tau
    const logScale = Math.log(spread)
    for (let q = 0; q < Q; q++) {
      uq[q] = u + spread * nodes[q]!
      a[q] = logScale + logW[q]! - 0.5 * uq[q]! * uq[q]! - HALF_LOG_2PI
    }
    for (let r = 0; r < m; r++) {
      const e0 = eta0[r]!
      const yr = y[s + r]!
      const o = r * Q
      for (let q = 0; q < Q; q++) {
        link.obsTerms(e0 + sigma * uq[q]!, yr, t)
        a[q]! += t[0]!
        L1[o + q] = t[1]!
        L2[o + q] = t[2]!
      }
    }
    let amax = -Infinity
    for (let q = 0; q < Q; q++) if (a[q]! > amax) amax = a[q]!
    let sum = 0
    for (let q = 0; q < Q; q++) {
      p[q] = Math.exp(a[q]! - amax)
      sum += p[q]!
    }
    const logL = amax + Math.log(sum)
    ll += logL
    for (let q = 0; q < Q; q++) {
      p[q]! /= sum
      posterior[g * Q + q] = p[q]!
    }
    if (!derivatives) continue
    // Exact score of the AGHQ sum: besides the fixed-node part, the nodes move with θ
    // through û(θ) (implicit function of h'(û) = 0) and τ(θ) = D^{−1/2}, D = σ²ΣW + 1:
    //   dû/dβ = −σ Σℓ''x / h'',  dû/dσ = −(Σℓ' + σ û Σℓ'') / h'',
    //   dD/dθ = σ² Σ W' dη/dθ + 2σ ΣW e_σ,  dη/dθ = (x, û) + σ dû/dθ,
    //   extra = d log τ/dθ + Σ_q p_q h'(u_q) (dû/dθ + √2 z_q dτ/dθ).
    // The Hessian keeps the fixed-node form: a quadrature-error approximation that only
    // affects the speed of convergence, not the point converged to.
    const hObs = sigma * sigma * s2 - 1
    for (let j = 0; j < k; j++) du[j] = -sigma * sx2[j]! / hObs
    du[k] = -(s1 + sigma * u * s2) / hObs
    for (let j = 0; j < k; j++) dlogTau[j] = -0.5 * sigma * sigma * (swpx[j]! + sigma * swp * du[j]!) / D
    dlogTau[k] = -0.5 * (sigma * sigma * swp * (u + sigma * du[k]!) + 2 * sigma * sw) / D
    Gq.fill(0)
    S1q.fill(0)
    let hss = 0
    for (let r = 0; r < m; r++) {
      const off = (s + r) * k
      const o = r * Q
      let A = 0
      let B = 0
      for (let q = 0; q < Q; q++) {
        const c = L1[o + q]!
        const go = q * K
        for (let j = 0; j < k; j++) Gq[go + j]! += c * X[off + j]!
        Gq[go + k]! += c * uq[q]!
        S1q[q]! += c
        const pl = p[q]! * L2[o + q]!
        A += pl
        B += pl * uq[q]!
        hss += pl * uq[q]! * uq[q]!
      }
      for (let j = 0; j < k; j++) {
        const xa = A * X[off + j]!
        const base = j * K
        for (let l = 0; l <= j; l++) H[base + l]! += xa * X[off + l]!
        H[k * K + j]! += B * X[off + j]!
      }
    }
    H[k * K + k]! += hss
    gbar.fill(0)
    for (let q = 0; q < Q; q++) {
      const go = q * K
      const pq = p[q]!
      for (let j = 0; j < K; j++) gbar[j]! += pq * Gq[go + j]!
      for (let j = 0; j < K; j++) {
        const v = pq * Gq[go + j]!
        const base = j * K
        for (let l = 0; l <= j; l++) H[base + l]! += v * Gq[go + l]!
      }
    }
    for (let q = 0; q < Q; q++) {
      const hq = p[q]! * (sigma * S1q[q]! - uq[q]!)
      const zq = Math.SQRT2 * nodes[q]! * tau
      for (let j = 0; j < K; j++) grad[j]! += hq * (du[j]! + zq * dlogTau[j]!)
    }
    for (let j = 0; j < K; j++) {
      grad[j]! += gbar[j]! + dlogTau[j]!
      const base = j * K
      for (let l = 0; l <= j; l++) H[base + l]! -= gbar[j]! * gbar[l]!
    }
  }
  if (derivatives) for (let j = 0; j < K; j++) for (let l = 0; l < j; l++) H[l * K + j] = H[j * K + l]!
  return { loglik: ll, gradient: grad, hessian: H, modes, scales, posterior }
}

export interface RandomInterceptFit {
  link: LinkName
  points: number
  /** θ = (β, σ), σ ≥ 0. */
  theta: Float64Array
  loglik: number
  gradient: Float64Array
  hessian: Float64Array
  /** Covariance of θ from the inverse observed information, or null when singular. */
  V: Float64Array | null
  converged: boolean
  iterations: IterationRecord[]
  warnings: EngineWarning[]
  /** The pooled fit (σ = 0) used for starting values and the LR test. */
  pooledLoglik: number
  pooledCoef: Float64Array
  layout: VillageLayout
  pass: QuadraturePass
}

function newtonDirection(g: Float64Array, H: Float64Array, K: number): { step: Float64Array, ridged: boolean } {
  const A = H.map(v => -v)
  for (let lambda = 0, attempt = 0; attempt < 30; attempt++, lambda = lambda === 0 ? 1e-8 : lambda * 10) {
    const L = Float64Array.from(A)
    for (let j = 0; j < K; j++) L[j * K + j] = A[j * K + j]! + lambda * Math.max(Math.abs(A[j * K + j]!), 1e-12)
    if (choleskyInPlace(L, K)) return { step: choleskySolve(L, K, g), ridged: lambda > 0 }
  }
  let n2 = 0
  for (const v of g) n2 += v * v
  const s = Math.sqrt(n2) || 1
  return { step: g.map(v => v / s), ridged: true }
}

/** Starting σ: 0.5 on the index scale; β from the pooled fit, scaled up for the attenuation a village effect causes. */
function startValues(link: Link, pooled: Float64Array): Float64Array {
  const sigma = 0.5
  const latentVar = link.name === 'logit' ? Math.PI * Math.PI / 3 : 1
  const scale = Math.sqrt(1 + sigma * sigma / latentVar)
  const th = new Float64Array(pooled.length + 1)
  for (let j = 0; j < pooled.length; j++) th[j] = pooled[j]! * scale
  th[pooled.length] = sigma
  return th
}

export function fitRandomIntercept(design: Design, linkName: LinkName = 'probit', options: RandomInterceptOptions = {}): RandomInterceptFit {
  if (design.w) {
    throw new EngineInputError('invalid_spec', 'the village random intercept does not take sampling weights; use the survey design for weighted data')
  }
  if (linkName !== 'probit' && linkName !== 'logit') {
    throw new EngineInputError('invalid_spec', `the village random intercept is available for probit and logit (not ${linkName})`)
  }
  const points = options.quadPoints ?? 12
  gaussHermite(points) // validates
  const link = getLink(linkName)
  const lay = layoutByVillage(design)
  if (lay.G < 2) throw new EngineInputError('invalid_spec', 'a village random intercept needs at least two villages')
  const k = design.k
  const K = k + 1
  const pooled = fitBinary(design, linkName, { skipSeparationCheck: false })
  const warnings: EngineWarning[] = [...pooled.warnings]
  let theta: Float64Array
  if (options.start) {
    if (options.start.length !== K) throw new EngineInputError('invalid_spec', `start values have length ${options.start.length}, expected ${K}`)
    theta = Float64Array.from(options.start)
  }
  else theta = startValues(link, pooled.coef)
  const maxIter = options.maxIterations ?? 100
  let cur = quadraturePass(lay, link, theta, points, true)
  if (!Number.isFinite(cur.loglik)) throw new EngineInputError('non_finite_input', 'log-likelihood is not finite at the starting values')
  const iterations: IterationRecord[] = []
  let converged = false
  for (let iter = 0; ; iter++) {
    const { step, ridged } = newtonDirection(cur.gradient, cur.hessian, K)
    let dec = 0
    let rel = 0
    let gn = 0
    for (let j = 0; j < K; j++) {
      dec += cur.gradient[j]! * step[j]!
      rel = Math.max(rel, Math.abs(step[j]!) / Math.max(1, Math.abs(theta[j]!)))
      gn += cur.gradient[j]! ** 2
    }
    const record: IterationRecord = { iter, loglik: cur.loglik, gradientNorm: Math.sqrt(gn), stepSize: 0 }
    iterations.push(record)
    if (!ridged && Math.abs(dec) < 1e-10 && rel < 1e-8) {
      converged = true
      break
    }
    if (iter >= maxIter) break
    let tStep = 1
    let next: QuadraturePass | null = null
    let cand = theta
    for (let half = 0; half <= 40; half++) {
      cand = theta.map((v, j) => v + tStep * step[j]!)
      const c = quadraturePass(lay, link, cand, points, true, cur.modes)
      // Near the optimum the fixed-node direction may differ from the AGHQ ascent by the
      // quadrature error, so a change within rounding of ℓ is accepted.
      if (Number.isFinite(c.loglik) && c.loglik >= cur.loglik - 1e-11 * (1 + Math.abs(cur.loglik))) {
        next = c
        break
      }
      tStep *= 0.5
    }
    if (!next) {
      if (!ridged && Math.abs(dec) < 1e-7) converged = true
      else warnings.push({ code: 'line_search_failed', message: 'no step increased the log-likelihood; estimates are the last iterate' })
      break
    }
    record.stepSize = tStep
    theta = cand
    cur = next
  }
  if (theta[k]! < 0) {
    // ℓ is even in σ: report the non-negative root and flip the modes with it.
    theta[k] = -theta[k]!
    cur = quadraturePass(lay, link, theta, points, true)
  }
  if (!converged) {
    warnings.push({ code: 'not_converged', message: `the random-intercept fit did not converge in ${iterations.length - 1} iterations; estimates should not be used for inference` })
  }
  const V = invertSpd(cur.hessian.map(v => -v), K)
  if (!V) warnings.push({ code: 'hessian_not_negative_definite', message: 'the information matrix is singular at the estimate (σ may be on the boundary 0): standard errors are unavailable' })
  return {
    link: linkName,
    points,
    theta,
    loglik: cur.loglik,
    gradient: cur.gradient,
    hessian: cur.hessian,
    V,
    converged,
    iterations,
    warnings,
    pooledLoglik: pooled.loglik,
    pooledCoef: pooled.coef,
    layout: lay,
    pass: cur
  }
}

/**
 * Does the answer depend on the number of points? One Newton step from θ̂ with twice as
 * many points (at most 100): the step's largest change relative to the standard error
 * (or to max(1, |θ|) without one), and the change in ℓ.
 */
export function quadratureCheck(fit: RandomInterceptFit): { points: number, loglikChange: number, maxChangeInSe: number, maxRelativeChange: number } {
  const link = getLink(fit.link)
  const K = fit.theta.length
  const more = Math.min(100, fit.points * 2)
  const pass = quadraturePass(fit.layout, link, fit.theta, more, true, fit.pass.modes)
  const { step } = newtonDirection(pass.gradient, pass.hessian, K)
  let inSe = 0
  let rel = 0
  for (let j = 0; j < K; j++) {
    const se = fit.V ? Math.sqrt(fit.V[j * K + j]!) : NaN
    if (se > 0) inSe = Math.max(inSe, Math.abs(step[j]!) / se)
    rel = Math.max(rel, Math.abs(step[j]!) / Math.max(1e-8, Math.abs(fit.theta[j]!)))
  }
  return { points: more, loglikChange: pass.loglik - fit.loglik, maxChangeInSe: inSe, maxRelativeChange: rel }
}
