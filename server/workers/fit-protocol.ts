import type { DataInput, ModelResults, ModelSpec } from '../../shared/utils/stats'

/**
 * A fit of this many rows or more is large: the worker collects its garbage once the input is let go, and the runner
 * ends the worker afterwards. Below it, what a kept worker holds is a few MB, and a full collection (tens of ms on
 * the worker's heap) would cost more than the memory it frees.
 */
export const LARGE_FIT_ROWS = 200_000

/** Rows of a fit's input (row objects, or columns: typed arrays or coded text). */
export function rowsOf(data: DataInput): number {
  if (Array.isArray(data)) return data.length
  const first = Object.values(data)[0] as { length?: number, codes?: Int32Array } | undefined
  return first?.codes?.length ?? first?.length ?? 0
}

export interface FitRequest {
  data: DataInput
  spec: ModelSpec
}

/** What the runner asks of a fit worker: a fit, or the warm-up a kept worker runs before it is first used. */
export type FitTask = { kind: 'fit', request: FitRequest } | { kind: 'warm-up' }

/** A task as posted, with the id its answer carries back. */
export type FitMessage = FitTask & { id: number }

export interface FitFailure {
  /** 'input': the data or specification cannot be fitted (a 4xx for the user); 'internal': a bug. */
  kind: 'input' | 'internal'
  code: string
  message: string
  variables: string[]
}

export type FitReply = { ok: true, results: ModelResults } | { ok: false, error: FitFailure }

/** The worker's answer to message `id`. */
export interface FitAnswer {
  id: number
  reply: FitReply
}
