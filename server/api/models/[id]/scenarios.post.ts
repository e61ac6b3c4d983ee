import { z } from 'zod'
import { scenariosRequestSchema } from '#shared/utils/modelling/request'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const { scenarios } = await readValidatedBody(event, validateWith(scenariosRequestSchema))
  const run = await findModelRun(id, user.organisationId)
  const results = await runScenarios(user, run, scenarios.map(s => ({ ...s, set: typeof s.set === 'boolean' ? (s.set ? 1 : 0) : s.set })))
  await audit(event, user, { action: 'model.scenario', entityType: 'model_run', entityId: run.id, details: { names: scenarios.map(s => s.name) } })
  return results
})
