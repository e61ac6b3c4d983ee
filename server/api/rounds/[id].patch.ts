import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// Opens a draft round (freezing its questionnaire) or closes an open one.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const body = await readValidatedBody(event, validateWith(roundStatusSchema))
  return setRoundStatus(event, user, id, body.status)
})
