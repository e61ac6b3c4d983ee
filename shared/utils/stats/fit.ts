/**
 * Maximum likelihood by Newton–Raphson on the analytic score and OBSERVED Hessian
 * (for every link, also probit, cloglog and cauchit; not Fisher scoring).
 *
 * Step: δ = (−H)^{-1} g. If the new point lowers ℓ, the step is halved (up to 40 times).
 * If −H is not positive definite (possible for cauchit far from the optimum) a ridge
 * λ·diag(−H) is added until it is, and a warning is recorded.
 * Convergence needs BOTH (tested on the step δ computed at the current point, which is then
 * taken: the estimate returned is the final iterate b + δ, with ℓ, g and H evaluated there)
 *   - gradient: the Newton decrement g'(−H)^{-1}g < gradTol (default 1e-10; it is the
 *     predicted remaining gain in ℓ times two, so it does not grow with N), and
 *   - relative change: max_j |δ_j| / max(1, |b_j|) < relTol (default 1e-8).
 * Starting values: all slopes 0, intercept F^{-1}(weighted share of ones); for n ≥ 40 000
 * these are first refined by Newton on a 5% systematic subsample (see `subsample`).
 */
import { checkSeparation } from './separation'
import type { Design } from './design'
import { EngineInputError, type EngineWarning } from './errors'
import { evaluate as evaluateSerial, type PassResult } from './likelihood'
import { choleskyInPlace, choleskySolve } from './linalg'
import { getLink, type Link, type LinkName } from './links'
import type { ParallelPasses } from './parallel'
import type { IterationRecord } from './types'

export interface FitOptions {
  maxIterations?: number
  gradTol?: number
  relTol?: number
  /** Starting values (length k); default as described above. */
  start?: ArrayLike<number>
  /** Skip the single-column separation check (it costs one pass). */
  skipSeparationCheck?: boolean
  /** Start from a Newton fit on a 5% systematic subsample when n ≥ 40 000 (default true). */
  warmStart?: boolean
  /** The fused pass split across threads (see parallel.ts); used for the full data, not the subsample. */
  parallel?: ParallelPasses | null
}

export interface FitResult {
  link: LinkName
  /** Coefficients, in design column order. */
  coef: Float64Array
  loglik: number
  gradient: Float64Array
  /** Hessian of ℓ at `coef` (observed information = −hessian). */
  hessian: Float64Array
  converged: boolean
  iterations: IterationRecord[]
  warnings: EngineWarning[]
  perfectlyPredicted: number
  /** Rows and iterations of the subsample fit that supplied the starting values, if any. */
  warmStart: { rows: number, iterations: number } | null
  /** The design's column shift, when the fit ran in shifted coordinates (see `Design.shift`). */
  shift: Float64Array | null
  /** Hessian in the shifted coordinates (well conditioned), when `shift` is set. */
  hessianShifted: Float64Array | null
}

/** b̃ = M'b: coefficients in the coordinates of the shifted columns x̃_j = x_j − c_j. */
export function toShifted(b: ArrayLike<number>, c: Float64Array): Float64Array {
  const out = Float64Array.from(b as ArrayLike<number>)
  for (let j = 1; j < c.length; j++) out[0]! += c[j]! * out[j]!
  return out
}

/** b = M'^{-1} b̃: back to the original columns. */
export function fromShifted(bt: ArrayLike<number>, c: Float64Array): Float64Array {
  const out = Float64Array.from(bt as ArrayLike<number>)
  for (let j = 1; j < c.length; j++) out[0]! -= c[j]! * out[j]!
  return out
}

/** g = M g̃ and H = M H̃ M' (M = I + c e_0'): score and Hessian in the original coordinates. */
function unshiftPass(g: Float64Array, H: Float64Array, c: Float64Array, k: number): { g: Float64Array, H: Float64Array } {
  const go = Float64Array.from(g)
  for (let j = 1; j < k; j++) go[j]! += c[j]! * g[0]!
  const Ho = new Float64Array(k * k)
  for (let j = 0; j < k; j++) {
    for (let m = 0; m < k; m++) Ho[j * k + m] = H[j * k + m]! + c[j]! * H[m]! + c[m]! * H[j * k]! + c[j]! * c[m]! * H[0]!
  }
  return { g: go, H: Ho }
}

function norm2(v: Float64Array): number {
  let s = 0
  for (let i = 0; i < v.length; i++) s += v[i]! * v[i]!
  return Math.sqrt(s)
}

/** Newton direction from (−H) δ = g, with a ridge if −H is not positive definite. */
function newtonStep(g: Float64Array, H: Float64Array, k: number): { step: Float64Array, ridged: boolean } {
  const A = new Float64Array(k * k)
  for (let i = 0; i < k * k; i++) A[i] = -H[i]!
  let L = Float64Array.from(A)
  if (choleskyInPlace(L, k)) return { step: choleskySolve(L, k, g), ridged: false }
  let lambda = 1e-8
  for (let attempt = 0; attempt < 30; attempt++, lambda *= 10) {
    L = Float64Array.from(A)
    for (let j = 0; j < k; j++) L[j * k + j] = A[j * k + j]! + lambda * Math.max(Math.abs(A[j * k + j]!), 1e-12)
    if (choleskyInPlace(L, k)) return { step: choleskySolve(L, k, g), ridged: true }
  }
  // Gradient ascent as the last resort, scaled to a small step.
  const gn = norm2(g) || 1
  return { step: g.map(v => v / gn), ridged: true }
}

interface LoopState {
  b: Float64Array
  cur: PassResult
  iterations: IterationRecord[]
  converged: boolean
  lineSearchFailed: boolean
  ridgedAtEnd: boolean
}

/**
 * Newton–Raphson with step halving from `b0`; see the module comment for the rules. With `finalPass` false the last
 * step is taken without evaluating ℓ, g and H there (the subsample's fit wants only the point).
 */
function newtonLoop(design: Design, link: Link, b0: Float64Array, maxIter: number, gradTol: number, relTol: number, parallel: Pick<ParallelPasses, 'evaluate'> | null = null, finalPass = true): LoopState {
  const k = design.k
  let b = b0
  const shift = design.shift ?? null
  const evaluate = (d: Design, l: Link, at: Float64Array, s: Float64Array | null): PassResult => (parallel ? parallel.evaluate(at, s) : evaluateSerial(d, l, at, s))
  let cur = evaluate(design, link, b, shift)
  if (!Number.isFinite(cur.loglik)) throw new EngineInputError('non_finite_input', 'log-likelihood is not finite at the starting values')
  const iterations: IterationRecord[] = []
  let converged = false
  let ridgedAtEnd = false
  let lineSearchFailed = false
  for (let iter = 0; ; iter++) {
    const { step, ridged } = newtonStep(cur.gradient, cur.hessian, k)
    ridgedAtEnd = ridged
    let decrement = 0
    let rel = 0
    for (let j = 0; j < k; j++) {
      decrement += cur.gradient[j]! * step[j]!
      rel = Math.max(rel, Math.abs(step[j]!) / Math.max(1, Math.abs(b[j]!)))
    }
    const record: IterationRecord = { iter, loglik: cur.loglik, gradientNorm: norm2(cur.gradient), stepSize: 0 }
    iterations.push(record)
    if (!ridged && Math.abs(decrement) < gradTol && rel < relTol) {
      converged = true
      // Return the final iterate b + δ (evaluated, so ℓ, g and H belong to the estimate returned),
      // not the point the last step was computed at; keep b if rounding makes the step lower ℓ.
      const nb = new Float64Array(k)
      for (let j = 0; j < k; j++) nb[j] = b[j]! + step[j]!
      if (!finalPass) {
        record.stepSize = 1
        b = nb
        break
      }
      const last = evaluate(design, link, nb, shift)
      if (Number.isFinite(last.loglik) && last.loglik >= cur.loglik - 1e-13 * (1 + Math.abs(cur.loglik))) {
        record.stepSize = 1
        b = nb
        cur = last
        iterations.push({ iter: iter + 1, loglik: cur.loglik, gradientNorm: norm2(cur.gradient), stepSize: 0 })
      }
      break
    }
    if (iter >= maxIter) break
    let t = 1
    let next = null
    let nb = b
    for (let half = 0; half <= 40; half++) {
      nb = new Float64Array(k)
      for (let j = 0; j < k; j++) nb[j] = b[j]! + t * step[j]!
      const cand = evaluate(design, link, nb, shift)
      // Accept any non-decrease, allowing for rounding in a sum of n terms.
      if (Number.isFinite(cand.loglik) && cand.loglik >= cur.loglik - 1e-13 * (1 + Math.abs(cur.loglik))) {
        next = cand
        break
      }
      t *= 0.5
    }
    if (!next) {
      lineSearchFailed = true
      break
    }
    record.stepSize = t
    b = nb
    cur = next
  }
  return { b, cur, iterations, converged, lineSearchFailed, ridgedAtEnd }
}

/**
 * The starting values' subsample: every s-th row, s = ⌊n / (n/20)⌋ (≈ 5% of the data, at least
 * 10 000 rows), as its stride and row count; null when too small or of one outcome only. Newton on it
 * gives starting values within sampling error of the full-data estimate, so the full data needs about
 * two passes fewer. Deterministic (no randomness).
 */
function subsample(design: Design): { stride: number, rows: number } | null {
  const { n, y } = design
  const m = Math.max(10000, Math.floor(n / 20))
  const stride = Math.floor(n / m)
  if (stride < 2) return null
  const rows = Math.floor(n / stride)
  let ones = 0
  for (let r = 0; r < rows; r++) ones += y[r * stride]!
  if (ones === 0 || ones === rows) return null
  return { stride, rows }
}

/** The subsample's rows as a design of their own (for a fit on this thread). */
function subsampleDesign(design: Design, stride: number, rows: number): Design {
  const { k, X, y, w } = design
  const Xs = new Float64Array(rows * k)
  const ys = new Float64Array(rows)
  const ws = w ? new Float64Array(rows) : null
  for (let r = 0; r < rows; r++) {
    const i = r * stride
    Xs.set(X.subarray(i * k, (i + 1) * k), r * k)
    ys[r] = y[i]!
    if (ws) ws[r] = w![i]!
  }
  return { ...design, n: rows, X: Xs, y: ys, w: ws, cluster: null, rowIndex: new Int32Array(0) }
}

/**
 * The subsample's passes on the host's threads, reading its rows where they lie in the full design (a pass pool that
 * can, see `ParallelPasses.evaluateEvery`): no copy of the rows is made. Null: fitted on this thread over a copy.
 */
function subsamplePasses(parallel: ParallelPasses | null, design: Design, stride: number, rows: number): Pick<ParallelPasses, 'evaluate'> | null {
  const every = parallel?.evaluateEvery
  if (!every || design.shift) return null
  const end = rows * stride
  return { evaluate: b => every(stride, end, b) }
}

export function fitBinary(design: Design, linkName: LinkName = 'probit', options: FitOptions = {}): FitResult {
  const link: Link = getLink(linkName)
  const { n, k, y, w } = design
  const maxIter = options.maxIterations ?? 50
  const gradTol = options.gradTol ?? 1e-10
  const relTol = options.relTol ?? 1e-8
  const warnings: EngineWarning[] = options.skipSeparationCheck ? [] : checkSeparation(design, options.parallel?.separationStats())

  let b: Float64Array = new Float64Array(k)
  if (options.start) {
    if (options.start.length !== k) throw new EngineInputError('invalid_spec', `start values have length ${options.start.length}, expected ${k}`)
    b.set(Array.from(options.start))
    if (design.shift) b = toShifted(b, design.shift)
  }
  else {
    let s1 = 0
    let sw = 0
    for (let i = 0; i < n; i++) {
      const wi = w ? w[i]! : 1
      s1 += wi * y[i]!
      sw += wi
    }
    b[0] = link.quantile(s1 / sw)
  }

  let warmStart: { rows: number, iterations: number } | null = null
  if (!options.start && n >= 40000 && options.warmStart !== false) {
    const picked = subsample(design)
    if (picked) {
      const { stride, rows } = picked
      const passes = subsamplePasses(options.parallel ?? null, design, stride, rows)
      // Tolerances far looser than the full fit's: the subsample's estimate is itself some 4.5 standard errors of the
      // full estimate away from it, so refining it further saves no full-data pass (measured: the same 4 at 10^6).
      const pre = newtonLoop(passes ? design : subsampleDesign(design, stride, rows), link, Float64Array.from(b), maxIter, 1e-3, 1e-3, passes, false)
      if (pre.converged && pre.b.every(v => Number.isFinite(v))) {
        b = pre.b
        warmStart = { rows, iterations: pre.iterations.filter(r => r.stepSize > 0).length }
      }
    }
  }
  const { b: bFinal, cur, iterations, converged, lineSearchFailed, ridgedAtEnd } = newtonLoop(design, link, b, maxIter, gradTol, relTol, options.parallel ?? null)
  b = bFinal

  if (lineSearchFailed) {
    warnings.push({ code: 'line_search_failed', message: 'no step along the Newton direction increased the log-likelihood; estimates are the last iterate' })
  }
  if (!converged) {
    warnings.push({
      code: 'not_converged',
      message: `Newton–Raphson did not converge in ${iterations.length - 1} iterations; estimates are the last iterate and should not be used for inference`
    })
  }
  if (ridgedAtEnd) {
    warnings.push({ code: 'hessian_not_negative_definite', message: 'the Hessian is not negative definite at the last iterate: standard errors are unavailable' })
  }
  if (cur.perfectlyPredicted === n) {
    throw new EngineInputError('complete_separation',
      'complete separation: a combination of covariates predicts every outcome perfectly; the model cannot be estimated')
  }
  if (cur.perfectlyPredicted > 0) {
    warnings.push({
      code: 'perfect_prediction',
      message: `${cur.perfectlyPredicted} rows are predicted with probability above 1 − 1e-10: possible (quasi-)separation by a combination of covariates`
    })
  }
  const shift = design.shift ?? null
  const back = shift ? unshiftPass(cur.gradient, cur.hessian, shift, k) : null
  return {
    link: link.name,
    coef: shift ? fromShifted(b, shift) : b,
    loglik: cur.loglik,
    gradient: back ? back.g : cur.gradient,
    hessian: back ? back.H : cur.hessian,
    shift,
    hessianShifted: shift ? cur.hessian : null,
    converged,
    iterations,
    warnings,
    perfectlyPredicted: cur.perfectlyPredicted,
    warmStart
  }
}
