import { z } from 'zod'
import { MODEL_CAUTIONS } from '#shared/utils/cautions'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })
const querySchema = z.object({ format: z.enum(['csv', 'json']).default('csv') })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const { format } = await getValidatedQuery(event, validateWith(querySchema))
  const run = await findModelRun(id, user.organisationId)
  if (run.status !== 'done' || !run.results) throw createError({ statusCode: 409, message: 'This run has no results to export yet.' })
  const context = await roundContext(run.roundId, user.organisationId)
  setResponseHeader(event, 'content-disposition', `attachment; filename="furrowcast-model-${run.id}.${format}"`)
  if (format === 'json') {
    setResponseHeader(event, 'content-type', 'application/json; charset=utf-8')
    return { cautions: MODEL_CAUTIONS, run: { id: run.id, spec: run.spec, rowsHash: run.rowsHash, engineVersion: run.engineVersion, createdAt: run.createdAt }, results: run.results }
  }
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  return runAsCsv(run, context.villageNames)
})
