/**
 * Heteroskedastic probit: y* = x'β + ε, Var(ε | z) = exp(2 z'γ) (z without a constant),
 * so P(y = 1 | x, z) = Φ(x'β / exp(z'γ)). Maximum likelihood by Newton–Raphson with the
 * analytic score and observed Hessian, starting from the homoskedastic probit (γ = 0);
 * the LR test of γ = 0 on dim(γ) df is the test of homoskedasticity.
 *
 * With η_i = x_i'β e^{−z_i'γ} and ℓ_i(η) the probit log-likelihood term:
 *   ℓ(β, γ) = Σ_i w_i ℓ_i(η_i),
 *   ∂η/∂β = x e^{−z'γ},  ∂η/∂γ = −η z,
 *   ∂²η/∂β∂γ' = −x z' e^{−z'γ},  ∂²η/∂γ∂γ' = η z z',  ∂²η/∂β∂β' = 0,
 *   g = Σ w ℓ' ∂η/∂θ,  H = Σ w [ℓ'' (∂η/∂θ)(∂η/∂θ)' + ℓ' ∂²η/∂θ∂θ'].
 */
import type { Design } from './design'
import { chiSquareSf } from './distributions'
import { EngineInputError } from './errors'
import { fitBinary } from './fit'
import { choleskyInPlace, choleskySolve, invertSpd } from './linalg'
import { getLink } from './links'
import { makeEstimate } from './summary'
import type { CoefficientRow } from './types'

export interface HeteroProbitPass {
  loglik: number
  gradient: Float64Array
  hessian: Float64Array
}

/** ℓ, score and Hessian at θ = (β, γ); Z is row-major n×m (no constant). */
export function heteroProbitPass(design: Design, Z: Float64Array, m: number, theta: ArrayLike<number>): HeteroProbitPass {
  const { n, k, X, y, w } = design
  const link = getLink('probit')
  const P = k + m
  const g = new Float64Array(P)
  const H = new Float64Array(P * P)
  const d = new Float64Array(P)
  const t = new Float64Array(3)
  let ll = 0
  for (let i = 0; i < n; i++) {
    let xb = 0
    for (let j = 0; j < k; j++) xb += X[i * k + j]! * theta[j]!
    let zg = 0
    for (let j = 0; j < m; j++) zg += Z[i * m + j]! * theta[k + j]!
    const s = Math.exp(-zg)
    const eta = xb * s
    link.obsTerms(eta, y[i]!, t)
    const wi = w ? w[i]! : 1
    ll += wi * t[0]!
    const l1 = wi * t[1]!
    const l2 = wi * t[2]!
    for (let j = 0; j < k; j++) d[j] = X[i * k + j]! * s
    for (let j = 0; j < m; j++) d[k + j] = -eta * Z[i * m + j]!
    for (let a = 0; a < P; a++) {
      g[a]! += l1 * d[a]!
      for (let b = 0; b <= a; b++) H[a * P + b]! += l2 * d[a]! * d[b]!
    }
    // Second derivatives of η: the γβ block and the γγ block.
    for (let a = 0; a < m; a++) {
      const za = Z[i * m + a]!
      for (let b = 0; b < k; b++) H[(k + a) * P + b]! += l1 * -X[i * k + b]! * za * s
      for (let b = 0; b <= a; b++) H[(k + a) * P + k + b]! += l1 * eta * za * Z[i * m + b]!
    }
  }
  for (let a = 0; a < P; a++) for (let b = 0; b < a; b++) H[b * P + a] = H[a * P + b]!
  return { loglik: ll, gradient: g, hessian: H }
}

export interface HeteroProbitResult {
  /** Variance terms, by column name. */
  varianceTerms: string[]
  coefficients: CoefficientRow[]
  /** γ, the variance-function coefficients. */
  variance: CoefficientRow[]
  loglik: number
  probitLoglik: number
  lrTest: { statistic: number, df: number, p: number }
  converged: boolean
  reading: string
}

/** Reads the variance covariates (numeric design columns by term name) into Z. */
function varianceMatrix(design: Design, names: string[]): Float64Array {
  const { n, k, X, plan } = design
  const cols = names.map((name) => {
    const j = plan.terms.findIndex(t => t.name === name)
    if (j <= 0) throw new EngineInputError('unknown_variable', `'${name}' is not a term of the model, so it cannot enter the variance`, [name])
    return j
  })
  const m = cols.length
  const Z = new Float64Array(n * m)
  for (let i = 0; i < n; i++) for (let a = 0; a < m; a++) Z[i * m + a] = X[i * k + cols[a]!]!
  return Z
}

export function fitHeteroProbit(design: Design, varianceTerms: string[], maxIterations = 100): HeteroProbitResult {
  if (!varianceTerms.length) throw new EngineInputError('invalid_spec', 'name at least one covariate for the variance')
  const m = varianceTerms.length
  const k = design.k
  const P = k + m
  const Z = varianceMatrix(design, varianceTerms)
  const probit = fitBinary(design, 'probit')
  let theta = new Float64Array(P)
  theta.set(probit.coef)
  let cur = heteroProbitPass(design, Z, m, theta)
  let converged = false
  for (let iter = 0; iter < maxIterations; iter++) {
    const A = cur.hessian.map(v => -v)
    let ridge = 0
    let L = Float64Array.from(A)
    while (!choleskyInPlace(L, P)) {
      ridge = ridge === 0 ? 1e-8 : ridge * 10
      if (ridge > 1e8) break
      L = Float64Array.from(A)
      for (let j = 0; j < P; j++) L[j * P + j] = A[j * P + j]! + ridge * Math.max(1e-12, Math.abs(A[j * P + j]!))
    }
    const step = choleskySolve(L, P, cur.gradient)
    let dec = 0
    let rel = 0
    for (let j = 0; j < P; j++) {
      dec += step[j]! * cur.gradient[j]!
      rel = Math.max(rel, Math.abs(step[j]!) / Math.max(1, Math.abs(theta[j]!)))
    }
    if (ridge === 0 && Math.abs(dec) < 1e-12 && rel < 1e-9) {
      converged = true
      break
    }
    let tStep = 1
    let accepted = false
    for (let half = 0; half < 40; half++) {
      const cand = theta.map((v, j) => v + tStep * step[j]!)
      const next = heteroProbitPass(design, Z, m, cand)
      if (Number.isFinite(next.loglik) && next.loglik >= cur.loglik - 1e-12 * (1 + Math.abs(cur.loglik))) {
        theta = cand
        cur = next
        accepted = true
        break
      }
      tStep /= 2
    }
    if (!accepted) {
      converged = Math.abs(dec) < 1e-8
      break
    }
  }
  const V = invertSpd(cur.hessian.map(v => -v), P)
  const row = (j: number, term: string, label: string): CoefficientRow => ({ term, label, ...makeEstimate(theta[j]!, V ? V[j * P + j]! : null) })
  const stat = Math.max(0, 2 * (cur.loglik - probit.loglik))
  const p = chiSquareSf(stat, m)
  const named = varianceTerms.map(name => design.plan.terms.find(t => t.name === name)!.label).join(', ')
  const reading = p < 0.05
    ? `The error variance changes with ${named} (p = ${p.toPrecision(2)}): the homoskedastic probit's coefficients and effects may be misleading.`
    : `No evidence that the error variance changes with ${named} (p = ${p.toPrecision(2)}).`
  return {
    varianceTerms,
    coefficients: design.plan.terms.map((t, j) => row(j, t.name, t.label)),
    variance: varianceTerms.map((name, a) => row(k + a, name, `variance: ${design.plan.terms.find(t => t.name === name)!.label}`)),
    loglik: cur.loglik,
    probitLoglik: probit.loglik,
    lrTest: { statistic: stat, df: m, p },
    converged,
    reading
  }
}
