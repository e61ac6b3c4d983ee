import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const body = await readValidatedBody(event, validateWith(assignmentsSchema))
  return setAssignments(event, user, id, body.assignments)
})
