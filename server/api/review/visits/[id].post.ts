import { z } from 'zod'

const paramsSchema = z.object({ id: z.uuid() })

// Accept, send back (with a reason) or correct (audited, old values kept) one visit.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const body = await readValidatedBody(event, validateWith(reviewActionSchema))
  return reviewVisit(event, user, id, body)
})
