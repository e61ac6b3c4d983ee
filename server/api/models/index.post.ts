import { modelRequestSchema } from '#shared/utils/modelling/request'

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const request = await readValidatedBody(event, validateWith(modelRequestSchema))
  const run = await startModelRun(event, user, request)
  setResponseStatus(event, 202)
  return runSummary(run)
})
