import type { DataInput, ModelResults, ModelSpec } from '../../shared/utils/stats'

export interface FitRequest {
  data: DataInput
  spec: ModelSpec
}

export interface FitFailure {
  /** 'input': the data or specification cannot be fitted (a 4xx for the user); 'internal': a bug. */
  kind: 'input' | 'internal'
  code: string
  message: string
  variables: string[]
}

export type FitReply = { ok: true, results: ModelResults } | { ok: false, error: FitFailure }
