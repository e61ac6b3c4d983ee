import { z } from 'zod'
import { sampleListSchema, sampleUploadSchema } from '#shared/utils/schemas/sample'

const paramsSchema = z.object({ id: z.coerce.number().int().positive(), villageId: z.coerce.number().int().positive() })

// One village's list, uploaded as a CSV file's text or typed as rows; all or nothing (422 with the problems per row).
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id, villageId } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const body = await readValidatedBody(event, input => (input !== null && typeof input === 'object' && 'csv' in input
    ? validateWith(sampleUploadSchema)(input)
    : validateWith(sampleListSchema)(input)))
  return saveSampleList(event, user, id, villageId, body)
})
