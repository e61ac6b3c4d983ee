import { deviceStatusSchema } from '#shared/utils/schemas/field-device'

// "Am I revoked?" A tablet asks this at every contact, locked or not, signed in or not (a revocation ends its
// owner's sessions). It proves itself with the random token it was given at set-up; the answer says nothing else.
export default definePublicHandler(async (event) => {
  const { deviceId, token } = await readValidatedBody(event, validateWith(deviceStatusSchema))
  return { state: await deviceState(deviceId, token) }
})
