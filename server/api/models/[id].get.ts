import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const run = await findModelRun(id, user.organisationId)
  // Cheap whatever the size of the round: the run row, the round's data version and the village names.
  const context = await roundContext(run.roundId, user.organisationId)
  return {
    ...runSummary(run),
    request: run.request,
    spec: run.spec,
    rowsHash: run.rowsHash,
    dataChanged: await runDataChanged(run),
    engineVersion: run.engineVersion,
    questionnaireVersionIds: run.questionnaireVersionIds,
    excluded: run.excluded,
    results: run.results,
    error: run.error,
    villageNames: context.villageNames
  }
})
