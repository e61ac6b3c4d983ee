import { modelRequestSchema } from '#shared/utils/modelling/request'

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const request = await readValidatedBody(event, validateWith(modelRequestSchema))
  return previewModel(user, request)
})
