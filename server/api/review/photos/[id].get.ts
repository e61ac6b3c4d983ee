import { z } from 'zod'

const paramsSchema = z.object({ id: z.uuid() })

// The bytes of one stored photo, for the coordinator reviewing its visit.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const photo = await storedPhotoFor(user.organisationId, id)
  const object = await getObject(photo.objectKey)
  // Only the three photo types are ever stored; nosniff and a fixed file name keep a browser from reading the
  // bytes as anything else, even if a file slipped in before the server checked photos by their bytes.
  const type = PHOTO_TYPES[photo.contentType] ? photo.contentType : 'application/octet-stream'
  setResponseHeaders(event, {
    'content-type': type,
    'x-content-type-options': 'nosniff',
    'content-disposition': `${type === 'application/octet-stream' ? 'attachment' : 'inline'}; filename="photo-${photo.id}.${PHOTO_TYPES[type] ?? 'bin'}"`,
    'cache-control': 'private, max-age=3600'
  })
  return Buffer.from(await object.Body!.transformToByteArray())
})
