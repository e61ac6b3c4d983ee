/**
 * How the engine signals problems.
 *
 * - Anything that makes a fit impossible (bad outcome, too few rows, non-finite values,
 *   unknown variable, complete separation, …) is THROWN as an `EngineInputError` with a
 *   stable `code`; nothing is returned in that case.
 * - Anything the fit survives (a dropped collinear column, rows dropped for missing values,
 *   quasi-complete separation, non-convergence, …) is RETURNED as an `EngineWarning` in the
 *   `warnings` list of the result. Warnings are never only logged.
 */

export type EngineErrorCode
  = | 'unknown_variable'
    | 'outcome_not_binary'
    | 'outcome_constant'
    | 'too_few_rows'
    | 'non_finite_input'
    | 'invalid_value'
    | 'invalid_spec'
    | 'complete_separation'
    | 'singular_information'
    | 'not_nested'

export type EngineWarningCode
  = | 'rows_dropped_missing'
    | 'collinear_column_dropped'
    | 'empty_level_dropped'
    | 'quasi_complete_separation'
    | 'perfect_prediction'
    | 'not_converged'
    | 'line_search_failed'
    | 'hessian_not_negative_definite'
    | 'few_clusters'
    | 'weights_not_likelihood'
    | 'small_hl_groups'
    | 'few_villages'
    | 'sigma_on_boundary'
    | 'quadrature_unstable'
    | 'few_psus'
    | 'singleton_stratum'

/** A problem the fit survived; part of every result object. */
export interface EngineWarning {
  code: EngineWarningCode
  message: string
  /** Variables or terms concerned, by name, when there are any. */
  variables?: string[]
}

/** Thrown when the input makes estimation impossible. `code` is stable; `message` is for people. */
export class EngineInputError extends Error {
  readonly code: EngineErrorCode
  readonly variables: string[]
  constructor(code: EngineErrorCode, message: string, variables: string[] = []) {
    super(message)
    this.name = 'EngineInputError'
    this.code = code
    this.variables = variables
  }
}
