import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// Checks a CSV file against the round's questionnaire and shows how it maps. Writes nothing.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const request = await readImportRequest(event)
  return previewImport(user, id, request)
})
