import type { ModelRequest } from '../utils/modelling/request'
import type { ModelResults, ModelSpec } from '../utils/stats/types'

export interface ModelRunSummary {
  id: number
  roundId: number
  status: 'running' | 'done' | 'failed'
  link: string
  se: string
  equation: string
  /** The characteristics in the fit, by their labels. */
  covariates: string[]
  /** Several rounds together: how many rounds, and whether each farm is followed; absent for one round. */
  rounds?: { count: number, followsFarms: boolean }
  /** In the list of a round's fits: whether this is the fit funders see now. */
  published?: boolean
  /** Null until the fit has read its rows. */
  rowCount: number | null
  used: number | null
  loglik: number | null
  aic: number | null
  converged: boolean | null
  warnings: number
  createdAt: string
  durationMs: number | null
}

export interface ModelRunDetail extends ModelRunSummary {
  request: ModelRequest
  spec: ModelSpec
  rowsHash: string | null
  dataChanged: boolean
  engineVersion: string
  questionnaireVersionIds: number[] | null
  excluded: { notAccepted: Record<string, number> } | null
  results: ModelResults | null
  error: { code: string, message: string } | null
  villageNames: Record<string, string>
}

export interface ModelPreview {
  equation: string
  rows: { totalRows: number, used: number, dropped: number, byVariable: Array<{ variable: string, label: string, count: number }> }
  excluded: { notAccepted: Record<string, number> }
  problem: string | null
  /** Villages among the visits used. */
  villages: number
}
