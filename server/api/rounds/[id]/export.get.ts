import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })
const querySchema = z.object({ part: z.enum(['all', 'visits', 'dictionary']).default('all') })

// Accepted visits of a round: everything in a zip (visits, data dictionary, read-me with the cautions), or one CSV.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const { part } = await getValidatedQuery(event, validateWith(querySchema))
  const round = await findRound(user.organisationId, id)
  await audit(event, user, { action: 'round.export', entityType: 'round', entityId: round.id, details: { part } })
  if (part === 'all') {
    setResponseHeader(event, 'content-type', 'application/zip')
    setResponseHeader(event, 'content-disposition', `attachment; filename="furrowcast-round-${round.id}.zip"`)
    return Buffer.from(await roundExportZip(round, user.organisationId))
  }
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="furrowcast-round-${round.id}-${part}.csv"`)
  return part === 'dictionary'
    ? dataDictionaryCsv(round.currentVersionId)
    : acceptedVisitsCsv(round.id, user.organisationId, round.currentVersionId)
})
