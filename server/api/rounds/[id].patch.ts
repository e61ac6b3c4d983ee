import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// Opens a draft round (freezing its questionnaire), closes an open one, reopens a closed one; sets the target.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const body = await readValidatedBody(event, validateWith(roundPatchSchema))
  return updateRound(event, user, id, body)
})
