import { z } from 'zod'

const paramsSchema = z.object({ id: z.uuid() })
const querySchema = z.object({ visitId: z.uuid(), sha256: z.string().regex(/^[0-9a-f]{64}$/, 'sha256 must be 64 hex digits') })

// Device → server: the bytes of one photo (already resized on the device), after its visit has synced.
export default defineRoleHandler(['enumerator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const { visitId, sha256 } = await getValidatedQuery(event, validateWith(querySchema))
  const contentType = (getHeader(event, 'content-type') ?? '').split(';')[0]!.trim()
  if (!PHOTO_TYPES[contentType]) throw createError({ statusCode: 415, message: 'Send a JPEG, PNG or WebP photo.' })
  // Read within PHOTO_MAX_BYTES by the request-body middleware (server/utils/request-rules.ts).
  const body = await readRawBody(event, false)
  if (!body?.length) throw createError({ statusCode: 400, message: 'The photo is empty.' })
  // The bytes decide what the file is: anything but a JPEG, PNG or WebP is refused, and so is a type that lies.
  const actual = photoTypeOf(body)
  if (!actual) throw createError({ statusCode: 415, message: 'This file is not a JPEG, PNG or WebP photo.' })
  if (actual !== contentType) throw createError({ statusCode: 422, message: `The file is a ${PHOTO_TYPES[actual]!.toUpperCase()} photo but was sent as ${contentType}.` })
  return storePhoto(user, { id, visitId, contentType, sha256 }, Buffer.from(body))
})
