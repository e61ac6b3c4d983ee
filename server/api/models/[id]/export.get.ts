import { z } from 'zod'
import { MODEL_CAUTIONS } from '#shared/utils/cautions'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })
const querySchema = z.object({
  format: z.enum(['zip', 'csv', 'json']).default('zip'),
  table: z.enum(MODEL_TABLES).default('effects')
})

// A fit's tables: all of them with a read-me in one zip, one table as CSV, or everything as JSON.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const { format, table } = await getValidatedQuery(event, validateWith(querySchema))
  const run = await findModelRun(id, user.organisationId)
  if (run.status !== 'done' || !run.results) throw createError({ statusCode: 409, message: 'This run has no results to export yet.' })
  const context = await roundContext(run.roundId, user.organisationId)
  const name = `furrowcast-fit-${run.id}`
  if (format === 'json') {
    setResponseHeader(event, 'content-disposition', `attachment; filename="${name}.json"`)
    setResponseHeader(event, 'content-type', 'application/json; charset=utf-8')
    return { cautions: MODEL_CAUTIONS, run: { id: run.id, spec: run.spec, rowsHash: run.rowsHash, engineVersion: run.engineVersion, createdAt: run.createdAt }, results: run.results }
  }
  if (format === 'csv') {
    setResponseHeader(event, 'content-disposition', `attachment; filename="${name}-${table}.csv"`)
    setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
    return modelTableCsv(run, table, context.villageNames)
  }
  setResponseHeader(event, 'content-disposition', `attachment; filename="${name}.zip"`)
  setResponseHeader(event, 'content-type', 'application/zip')
  return Buffer.from(modelZip(run, context.villageNames))
})
