import type { H3Event } from 'h3'
import { ModelRequestError, equationText, specFromRequest, type ModelRequest } from '#shared/utils/modelling'
import { ENGINE_VERSION, buildDesign, type ModelSpec, type ScenarioSpec } from '#shared/utils/stats'
import { OUTCOME_KEY } from '#shared/utils/schemas/questionnaire'
import { ModelRun } from '../db/models'
import type { SignedInUser } from './access'

// A run still 'running' after this long was cut off (a server restart, say) and is reported as failed.
const STALE_AFTER_MS = 10 * 60_000

function specOrBadRequest(request: ModelRequest, data: RoundModelData): ModelSpec {
  try {
    return specFromRequest(request, data.questions, OUTCOME_KEY)
  }
  catch (error) {
    if (error instanceof ModelRequestError) throw createError({ statusCode: 400, message: `${error.field}: ${error.message}`, data: { fieldErrors: { [error.field]: error.message } } })
    throw error
  }
}

/** What a fit would use, before fitting: the equation, the visits used, and which are left out and why. */
export async function previewModel(user: SignedInUser, request: ModelRequest) {
  const data = await modelDataForRound(request.roundId, user.organisationId)
  const spec = specOrBadRequest(request, data)
  let rows = { totalRows: data.rows.length, used: 0, dropped: 0, byVariable: [] as Array<{ variable: string, label: string, count: number }> }
  let problem: string | null = null
  try {
    rows = buildDesign(columnsFor(spec, data.rows), spec).rows
  }
  catch (error) {
    problem = error instanceof Error ? error.message : String(error)
  }
  return { equation: equationText(spec), rows, excluded: data.excluded, problem }
}

async function fitAndStore(run: ModelRun, spec: ModelSpec, data: RoundModelData) {
  const started = Date.now()
  try {
    const reply = await runFitInWorker(columnsFor(spec, data.rows), spec)
    if (reply.ok) await run.update({ status: 'done', results: reply.results, durationMs: Date.now() - started, finishedAt: new Date() })
    else await run.update({ status: 'failed', error: { code: reply.error.code, message: reply.error.message }, durationMs: Date.now() - started, finishedAt: new Date() })
  }
  catch (error) {
    await run.update({ status: 'failed', error: { code: 'worker_failure', message: error instanceof Error ? error.message : String(error) }, finishedAt: new Date() })
  }
}

/**
 * Stores the run and starts the fit in a worker thread; answers at once so the coordinator can keep working.
 * `wait` lets the caller (a re-run, a test) await the result instead.
 */
export async function startModelRun(event: H3Event, user: SignedInUser, request: ModelRequest, options: { wait?: boolean } = {}) {
  const data = await modelDataForRound(request.roundId, user.organisationId)
  const spec = specOrBadRequest(request, data)
  if (data.rows.length === 0) throw createError({ statusCode: 422, message: 'This round has no accepted visits yet: accept visits in Review before fitting a model.' })
  const run = await ModelRun.create({
    organisationId: user.organisationId,
    roundId: request.roundId,
    createdBy: user.id,
    request,
    spec,
    questionnaireVersionIds: data.questionnaireVersionIds,
    rowsHash: data.rowsHash,
    usedRowsHash: usedRowsHash(spec, data.rows),
    rowCount: data.rows.length,
    excluded: data.excluded,
    engineVersion: ENGINE_VERSION,
    results: null,
    error: null,
    durationMs: null,
    finishedAt: null
  })
  await audit(event, user, { action: 'model.fit', entityType: 'model_run', entityId: run.id, details: { roundId: request.roundId, link: spec.link } })
  const fitting = fitAndStore(run, spec, data)
  if (options.wait) await fitting
  return run
}

export async function findModelRun(id: number, organisationId: number): Promise<ModelRun> {
  const run = await ModelRun.findOne({ where: { id, organisationId } })
  if (!run) throw createError({ statusCode: 404, message: 'No such model run.' })
  if (run.status === 'running' && Date.now() - run.createdAt.getTime() > STALE_AFTER_MS) {
    await run.update({ status: 'failed', error: { code: 'interrupted', message: 'The fit was interrupted (the server stopped); run it again.' }, finishedAt: new Date() })
  }
  return run
}

export function runSummary(run: ModelRun) {
  return {
    id: run.id,
    roundId: run.roundId,
    status: run.status,
    link: run.spec.link ?? 'probit',
    se: run.spec.se ?? 'conventional',
    equation: equationText(run.spec),
    covariates: run.spec.covariates.map(c => c.label ?? c.name),
    rowCount: run.rowCount,
    used: run.results?.rows.used ?? null,
    loglik: run.results?.fit.loglik ?? null,
    aic: run.results?.fit.aic ?? null,
    converged: run.results?.converged ?? null,
    warnings: run.results?.warnings.length ?? 0,
    createdAt: run.createdAt.toISOString(),
    durationMs: run.durationMs
  }
}

/** Fits the stored specification again with extra scenarios, on the same rows; refuses if the data changed. */
export async function runScenarios(user: SignedInUser, run: ModelRun, scenarios: ScenarioSpec[]) {
  if (run.status !== 'done' || !run.results) throw createError({ statusCode: 409, message: 'This run has no results to build scenarios on.' })
  const data = await modelDataForRound(run.roundId, user.organisationId)
  if (data.rowsHash !== run.rowsHash) {
    throw createError({ statusCode: 409, message: 'The accepted visits have changed since this run; fit the model again before adding scenarios.' })
  }
  const spec: ModelSpec = { ...run.spec, scenarios }
  const reply = await runFitInWorker(columnsFor(spec, data.rows), spec)
  if (!reply.ok) throw createError({ statusCode: 400, message: reply.error.message })
  const kept = run.results.scenarios.filter(s => !scenarios.some(n => n.name === s.name))
  await run.update({ results: { ...run.results, scenarios: [...kept, ...reply.results.scenarios] } })
  return reply.results.scenarios
}
