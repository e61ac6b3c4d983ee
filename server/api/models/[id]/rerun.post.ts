import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// The stored specification fitted again on today's accepted visits; same rows give the same numbers.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const original = await findModelRun(id, user.organisationId)
  const run = await startModelRun(event, user, original.request)
  setResponseStatus(event, 202)
  return runSummary(run)
})
