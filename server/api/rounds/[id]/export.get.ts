import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })
const querySchema = z.object({ part: z.enum(['visits', 'dictionary']).default('visits') })

// Accepted visits of a round as CSV, or the data dictionary that explains its columns.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const { part } = await getValidatedQuery(event, validateWith(querySchema))
  const round = await findRound(user.organisationId, id)
  await audit(event, user, { action: 'round.export', entityType: 'round', entityId: round.id, details: { part } })
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="furrowcast-round-${round.id}-${part}.csv"`)
  return part === 'dictionary'
    ? dataDictionaryCsv(round.currentVersionId)
    : acceptedVisitsCsv(round.id, user.organisationId, round.currentVersionId)
})
