import { runModel } from '#shared/utils/stats'
import type { PlotModelRequest } from '#shared/utils/schemas/plot-model'
import { CLUSTER_COLUMN, loadPlotModelData } from './plot-model-data'

/**
 * Fits a model from a repeated group's rows and answers the figures the page shows: coefficients (with their cluster
 * standard errors), average marginal effects, the fit's row counts and what the read kept. Fitted in the request: the
 * plot table of a round is small next to the farm fits that go to the worker.
 */
export async function fitPlotModel(organisationId: number, request: PlotModelRequest) {
  const data = await loadPlotModelData(organisationId, request)
  if (data.counts.kept < data.covariates.length + 2) {
    throw createError({ statusCode: 422, message: `Only ${data.counts.kept} rows have every answer this model needs: too few to fit it.`, data: { counts: data.counts } })
  }
  const results = runModel(data.columns, {
    outcome: data.outcome,
    outcomeLabel: data.outcomeLabel,
    covariates: data.covariates,
    link: request.link,
    cluster: CLUSTER_COLUMN,
    se: 'cluster',
    margins: 'ame'
  })
  return {
    level: request.level,
    group: { key: data.group.key, label: data.group.label },
    cluster: request.cluster,
    counts: data.counts,
    link: results.link,
    converged: results.converged,
    rows: results.rows,
    coefficients: results.coefficients,
    margins: results.margins,
    clusters: results.covariance,
    warnings: results.warnings
  }
}
