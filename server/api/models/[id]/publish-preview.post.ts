import { z } from 'zod'
import { publishPreviewSchema } from '#shared/utils/modelling/request'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// What funders would see if this fit were published with these choices (the coordinator confirms after reading it).
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const choices = await readValidatedBody(event, validateWith(publishPreviewSchema))
  const run = await findModelRun(id, user.organisationId)
  return publishPreview(user, run, choices)
})
