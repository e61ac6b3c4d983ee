import type { H3Event } from 'h3'
import { ModelRequestError, equationText, specFromRequest, type ModelRequest } from '#shared/utils/modelling'
import { ENGINE_VERSION, buildDesign, type ModelSpec, type ScenarioSpec } from '#shared/utils/stats'
import { OUTCOME_KEY } from '#shared/utils/schemas/questionnaire'
import { ModelRun, Round } from '../db/models'
import type { SignedInUser } from './access'
import { RECHECK_MS, announceRunEnd, runEndOrTimeout } from './model-run-end'
import { severalRoundsSpec } from './panel-data'
import { roundFamily, type RoundFamily } from './round-family'

// A run still 'running' after this long was cut off (a server restart, say) and is reported as failed.
const STALE_AFTER_MS = 10 * 60_000

function specOrBadRequest(request: ModelRequest, context: RoundContext, family?: RoundFamily): ModelSpec {
  try {
    // Several rounds: only the questions every round has can enter the model (round-family.ts).
    request.covariates.forEach((c, i) => {
      const key = c.key.split('.')[0]!
      const question = context.questions.find(q => q.key === key)
      if (family && question && !family.questions.some(q => q.key === key)) {
        throw new ModelRequestError(`covariates.${i}`, `${question.label} is not asked in every chosen round: leave it out or choose other rounds`)
      }
    })
    const spec = specFromRequest(request, family?.questions ?? context.questions, OUTCOME_KEY)
    return request.several ? severalRoundsSpec(spec, request.several) : spec
  }
  catch (error) {
    if (error instanceof ModelRequestError) throw createError({ statusCode: 400, message: `${error.field}: ${error.message}`, data: { fieldErrors: { [error.field]: error.message } } })
    throw error
  }
}

/** The rounds of a several-rounds request (this organisation's, 404 otherwise); undefined for one round. */
async function familyOf(request: ModelRequest, organisationId: number): Promise<RoundFamily | undefined> {
  return request.several ? roundFamily(organisationId, [request.roundId, ...request.several.roundIds]) : undefined
}

/** What a fit would use, before fitting: the equation, the visits used, and which are left out and why. */
export async function previewModel(user: SignedInUser, request: ModelRequest) {
  const context = await roundContext(request.roundId, user.organisationId)
  const family = await familyOf(request, user.organisationId)
  const spec = specOrBadRequest(request, context, family)
  await requireSampleWeights(spec, request.roundId, user.organisationId)
  const data = await loadRoundColumns(request.roundId, user.organisationId, spec, family)
  let rows = { totalRows: data.rowCount, used: 0, dropped: 0, byVariable: [] as Array<{ variable: string, label: string, count: number }> }
  let problem: string | null = null
  let villages = 0
  try {
    const design = buildDesign(data.columns, spec)
    rows = design.rows
    villages = design.clusterLabels.length
  }
  catch (error) {
    problem = error instanceof Error ? error.message : String(error)
  }
  return { equation: equationText(spec), rows, excluded: data.excluded, problem, villages }
}

/** Reads the rows (in the background: the request has been answered) and fits them in a worker thread. */
async function fitAndStore(run: ModelRun, spec: ModelSpec, family?: RoundFamily) {
  const started = Date.now()
  try {
    const data = await loadRoundColumns(run.roundId, run.organisationId, spec, family)
    const stored = run.update({
      rowsHash: data.rowsHash,
      usedRowsHash: data.usedRowsHash,
      rowCount: data.rowCount,
      questionnaireVersionIds: data.questionnaireVersionIds,
      excluded: data.excluded,
      dataVersion: data.dataVersion
    })
    // The row's read figures are stored while the worker fits (they are not needed before the end).
    const [reply] = await Promise.all([runFitInWorker(data.columns, spec, { transfer: data.transfer }), stored])
    // Following each farm, the engine's "groups" are farms: their predictions are no village figures (and one
    // farm's prediction is not for showing), so the village table, planning and the map have nothing to take.
    if (reply.ok && run.request.several?.model === 'farm-effects') reply.results.villages = null
    if (reply.ok) await run.update({ status: 'done', results: reply.results, durationMs: Date.now() - started, finishedAt: new Date() })
    else await run.update({ status: 'failed', error: { code: reply.error.code, message: reply.error.message }, durationMs: Date.now() - started, finishedAt: new Date() })
  }
  catch (error) {
    await run.update({ status: 'failed', error: { code: 'worker_failure', message: error instanceof Error ? error.message : String(error) }, finishedAt: new Date() })
  }
  finally {
    announceRunEnd(run.id)
  }
}

/**
 * Stores the run and starts reading its rows and fitting them in the background; answers at once (no visit is
 * read before answering), so the coordinator can keep working whatever the size of the round.
 * `wait` lets the caller (a re-run, a test) await the result instead.
 */
export async function startModelRun(event: H3Event, user: SignedInUser, request: ModelRequest, options: { wait?: boolean } = {}) {
  const context = await roundContext(request.roundId, user.organisationId)
  const family = await familyOf(request, user.organisationId)
  const spec = specOrBadRequest(request, context, family)
  await requireSampleWeights(spec, request.roundId, user.organisationId)
  if (!await hasAcceptedVisits(request.roundId)) throw createError({ statusCode: 422, message: 'This round has no accepted visits yet: accept visits in Review before fitting a model.' })
  const run = await ModelRun.create({
    organisationId: user.organisationId,
    roundId: request.roundId,
    createdBy: user.id,
    request,
    spec,
    questionnaireVersionIds: null,
    rowsHash: null,
    usedRowsHash: null,
    rowCount: null,
    excluded: null,
    engineVersion: ENGINE_VERSION,
    results: null,
    error: null,
    durationMs: null,
    finishedAt: null
  })
  await audit(event, user, { action: 'model.fit', entityType: 'model_run', entityId: run.id, details: { roundId: request.roundId, link: spec.link } })
  const fitting = fitAndStore(run, spec, family)
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

/**
 * The run once its fit has ended, or as it stands after `waitMs` or once the asker has gone (`gone`): a GET that
 * asked to wait (`?wait=`).
 */
export async function awaitRunEnd(run: ModelRun, organisationId: number, waitMs: number, gone: () => boolean): Promise<ModelRun> {
  const deadline = Date.now() + waitMs
  let current = run
  while (current.status === 'running' && !gone() && Date.now() < deadline) {
    await runEndOrTimeout(current.id, Math.min(RECHECK_MS, deadline - Date.now()))
    current = await findModelRun(current.id, organisationId)
  }
  return current
}

/**
 * Whether the round's accepted visits changed since the run read them: one primary-key read of the round's
 * counter. A finished run from before the counter existed has no version and is reported as possibly changed.
 */
export async function runDataChanged(run: ModelRun): Promise<boolean> {
  if (run.status !== 'done') return false
  // Several rounds: the sum of every round's version, as the loader stored it (model-data.ts).
  const ids = [run.roundId, ...(run.request.several?.roundIds ?? [])]
  const rounds = await Round.findAll({ where: { id: ids }, attributes: ['id', 'dataVersion'] })
  const now = rounds.length === ids.length ? rounds.reduce((sum, r) => sum + r.dataVersion, 0) : null
  return run.dataVersion === null || run.dataVersion === undefined || now !== run.dataVersion
}

export function runSummary(run: ModelRun) {
  return {
    id: run.id,
    roundId: run.roundId,
    status: run.status,
    link: run.spec.link ?? 'probit',
    // The village models have no `se` choice: name the treatment instead of a misleading 'conventional'.
    // Following each farm over several rounds, the random intercept is the farm's, not the village's.
    se: run.request.several?.model === 'farm-effects' ? 'farm-effects' : run.spec.villageTreatment === 'survey' || run.spec.villageTreatment === 'random-intercept' ? run.spec.villageTreatment : run.spec.se ?? 'conventional',
    equation: equationText(run.spec),
    covariates: run.spec.covariates.map(c => c.label ?? c.name),
    ...(run.request.several ? { rounds: { count: run.request.several.roundIds.length + 1, followsFarms: run.request.several.model === 'farm-effects' } } : {}),
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
  const spec: ModelSpec = { ...run.spec, scenarios }
  const data = await loadRoundColumns(run.roundId, user.organisationId, spec, await familyOf(run.request, user.organisationId))
  if (data.dataVersion !== run.dataVersion || data.rowsHash !== run.rowsHash) {
    throw createError({ statusCode: 409, message: 'The accepted visits have changed since this run; fit the model again before adding scenarios.' })
  }
  const reply = await runFitInWorker(data.columns, spec, { transfer: data.transfer })
  if (!reply.ok) throw createError({ statusCode: 400, message: reply.error.message })
  const kept = run.results.scenarios.filter(s => !scenarios.some(n => n.name === s.name))
  await run.update({ results: { ...run.results, scenarios: [...kept, ...reply.results.scenarios] } })
  return reply.results.scenarios
}
