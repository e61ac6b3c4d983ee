import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// Imports the rows of a CSV file as accepted visits of the round: all or nothing, or the valid rows only.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const request = await readImportRequest(event)
  return importRows(event, user, id, request)
})
