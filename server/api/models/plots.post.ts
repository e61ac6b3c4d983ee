import { plotModelRequestSchema } from '#shared/utils/schemas/plot-model'

// A model from a repeated group's rows (plot level, or farm level with terms from the plots): fitted and answered,
// not stored (it is an exploration beside the round's saved fits).
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const request = await readValidatedBody(event, validateWith(plotModelRequestSchema))
  return fitPlotModel(user.organisationId, request)
})
