/**
 * Passes over the rows split across threads, as an injected service: the engine stays pure (no threads, no
 * I/O) and calls these when given them, else its single-thread passes. A host (the CLI, the server's fit
 * worker, the benchmark) provides them over shared memory (server/workers/pass-pool.ts); each thread runs the
 * engine's own range kernels (`evaluateRange`, `clusterScoresRange`, `accumulateRange`) on contiguous blocks of
 * rows, and the partial sums are added in block order, so a result depends only on the number of blocks (not on
 * which thread ran which), and differs from the single-thread pass by rounding only (about 1e-15 relative).
 */
import type { PassResult } from './likelihood'

export interface ParallelPasses {
  /** Number of row blocks whose partial sums are added (at least the number of threads). */
  readonly blocks: number
  /** The separation check's column statistics over all rows (see separation.ts). */
  separationStats: () => Float64Array
  /** The fused pass: ℓ, g and H at b (in shifted coordinates when `shift` is given, see likelihood.ts). */
  evaluate: (b: Float64Array, shift: Float64Array | null) => PassResult
  /**
   * The fused pass over rows 0, step, 2·step, … below `end` only (the starting values' subsample, fit.ts), unshifted;
   * null when this host cannot (then the subsample is fitted on the calling thread, over its own copy).
   */
  evaluateEvery: ((step: number, end: number, b: Float64Array) => PassResult) | null
  /** Per-cluster score sums U (G×k, row-major) at b̃ with the design's shift (zeros when none). */
  clusterScores: (b: Float64Array, shift: Float64Array) => Float64Array
  /** Average marginal effects' sums: Σ w, Σ w·effect, Σ w·∂effect/∂b (m×k), at b. */
  ame: (b: Float64Array) => { weight: number, values: Float64Array, jacobian: Float64Array } | null
}

/** Contiguous row blocks [start, end) for `blocks` threads, starts aligned to 4 rows (the fused pass's stride). */
export function rowBlocks(n: number, blocks: number): Array<[number, number]> {
  const out: Array<[number, number]> = []
  for (let t = 0; t < blocks; t++) {
    const a = t === 0 ? 0 : Math.min(n, Math.floor((n * t) / blocks / 4) * 4)
    const b = t === blocks - 1 ? n : Math.min(n, Math.floor((n * (t + 1)) / blocks / 4) * 4)
    out.push([a, b])
  }
  return out
}
