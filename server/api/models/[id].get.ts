import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const run = await findModelRun(id, user.organisationId)
  const data = await modelDataForRound(run.roundId, user.organisationId)
  return {
    ...runSummary(run),
    request: run.request,
    spec: run.spec,
    rowsHash: run.rowsHash,
    dataChanged: data.rowsHash !== run.rowsHash,
    engineVersion: run.engineVersion,
    questionnaireVersionIds: run.questionnaireVersionIds,
    excluded: run.excluded,
    results: run.results,
    error: run.error,
    villageNames: data.villageNames
  }
})
