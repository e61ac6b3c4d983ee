// The fits a pooled worker runs before its first real fit (WARM_UP_FITS of them): a generated probit with village clusters and
// average marginal effects, just over the pass pool's threshold so the helper threads start and run each pass too.
// Why: a new thread runs the engine in V8's interpreter until its loops have been compiled. At 10^5 rows a cold
// worker took about 150 ms more for the fit itself, its new helper threads about 50 ms more per fit on top (the
// worker waiting at every pass for the slower, still-cold helper), besides the thread's start. Run while the server is idle.
import type { CodedColumn, DataColumns, ModelSpec } from '../../shared/utils/stats'
import { PARALLEL_MIN_ROWS } from './pass-pool'

const ROWS = PARALLEL_MIN_ROWS + 10_000

/**
 * Warm-up fits run one after another. Why several: V8 compiles a function called once per fit (the covariance, the
 * ROC, the village means…) to optimised code only after a few calls. Measured on the 2-core machine, a first real fit
 * at 10^5 rows and ten covariates: engine 234–242 ms after one warm-up fit, 189–217 ms after these five (a fully warm
 * worker: 86–135 ms). Five cost the worker 0.4–0.5 s once, at start or after a large fit ended it.
 */
export const WARM_UP_FITS = 5
const COVARIATES = 4
const VILLAGES = 100

export const warmUpSpec: ModelSpec = {
  outcome: 'y',
  covariates: Array.from({ length: COVARIATES }, (_, j) => ({ name: `x${j}`, type: 'numeric' as const })),
  link: 'probit',
  se: 'cluster',
  cluster: 'village'
}

/** Deterministic data (a linear congruential generator): the same warm-up on every start. */
export function warmUpData(): DataColumns {
  let seed = 20261204
  const uniform = () => (seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648
  const xs = Array.from({ length: COVARIATES }, () => new Float64Array(ROWS))
  const y = new Float64Array(ROWS)
  const village: CodedColumn = { codes: new Int32Array(ROWS), levels: Array.from({ length: VILLAGES }, (_, v) => `W${v}`) }
  for (let i = 0; i < ROWS; i++) {
    let eta = -0.3
    for (let j = 0; j < COVARIATES; j++) {
      xs[j]![i] = uniform() * 2 - 1
      eta += (j % 2 ? -0.4 : 0.5) * xs[j]![i]!
    }
    y[i] = eta + (uniform() - 0.5) * 2.5 > 0 ? 1 : 0
    village.codes[i] = i % VILLAGES
  }
  const data: Record<string, Float64Array | CodedColumn> = { y, village }
  xs.forEach((x, j) => {
    data[`x${j}`] = x
  })
  return data
}
