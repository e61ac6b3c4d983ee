import { z } from 'zod'
import { publishRequestSchema } from '#shared/utils/modelling/request'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const request = await readValidatedBody(event, validateWith(publishRequestSchema))
  const run = await findModelRun(id, user.organisationId)
  const publication = await publishRun(event, user, run, request)
  return { id: publication.id, roundId: publication.roundId, modelRunId: publication.modelRunId, publishedAt: publication.createdAt.toISOString() }
})
