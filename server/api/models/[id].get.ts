import { z } from 'zod'
import { runQuerySchema } from '#shared/utils/modelling/request'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const { wait } = await getValidatedQuery(event, validateWith(runQuerySchema))
  // Asked to wait: answers once the fit has ended (or after `wait` ms), so the screen needs no poll.
  let run = await findModelRun(id, user.organisationId)
  if (wait) run = await awaitRunEnd(run, user.organisationId, wait, () => requestGone(event))
  // Cheap whatever the size of the round: the run row, the round's data version and the village names as plain
  // rows (the run was found within the organisation, so its round needs no second check here).
  const [dataChanged, villageNames] = await Promise.all([runDataChanged(run), villageNamesOf(user.organisationId)])
  return {
    ...runSummary(run),
    request: run.request,
    spec: run.spec,
    rowsHash: run.rowsHash,
    dataChanged,
    engineVersion: run.engineVersion,
    questionnaireVersionIds: run.questionnaireVersionIds,
    excluded: run.excluded,
    results: run.results,
    error: run.error,
    villageNames
  }
})
