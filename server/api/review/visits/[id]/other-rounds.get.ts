import { z } from 'zod'

const paramsSchema = z.object({ id: z.uuid() })

// The same registered farm's visits in the other rounds, for the review panel.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const found = await otherRoundsOfVisit(user.organisationId, id)
  if (!found) throw createError({ statusCode: 404, message: 'No such visit.' })
  return found
})
