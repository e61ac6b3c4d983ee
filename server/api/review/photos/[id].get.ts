import { z } from 'zod'

const paramsSchema = z.object({ id: z.uuid() })

// The bytes of one stored photo, for the coordinator reviewing its visit.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const photo = await storedPhotoFor(user.organisationId, id)
  const object = await getObject(photo.objectKey)
  setResponseHeaders(event, { 'content-type': photo.contentType, 'cache-control': 'private, max-age=3600' })
  return Buffer.from(await object.Body!.transformToByteArray())
})
