import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// Accepted visits of a round: everything in a zip (visits, data dictionary, read-me with the cautions), or one CSV.
// Pseudonymised by default; the identifying export (farm codes, exact positions, free text) needs a reason and is
// audited as such.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const query = await getValidatedQuery(event, validateWith(visitExportQuerySchema))
  const round = await findRound(user.organisationId, id)
  const mode = { identifying: query.identifying === '1', precision: query.precision }
  await audit(event, user, mode.identifying
    ? { action: 'round.export_identifying', entityType: 'round', entityId: round.id, details: { part: query.part, reason: query.reason } }
    : { action: 'round.export', entityType: 'round', entityId: round.id, details: { part: query.part, precision: query.precision } })
  const name = `furrowcast-round-${round.id}${mode.identifying ? '-identifying' : ''}`
  if (query.part === 'all') {
    setResponseHeader(event, 'content-type', 'application/zip')
    setResponseHeader(event, 'content-disposition', `attachment; filename="${name}.zip"`)
    return Buffer.from(await roundExportZip(round, user.organisationId, mode))
  }
  if (query.part === 'rows') {
    const rows = await groupRowsCsv(round.id, user.organisationId, round.currentVersionId, query.group!, mode)
    if (rows === null) throw createError({ statusCode: 404, message: 'The round\'s questionnaire has no group with this name.' })
    setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
    setResponseHeader(event, 'content-disposition', `attachment; filename="${name}-${query.group}.csv"`)
    return rows
  }
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="${name}-${query.part}.csv"`)
  return query.part === 'dictionary'
    ? dataDictionaryCsv(round.currentVersionId, mode)
    : acceptedVisitsCsv(round.id, user.organisationId, round.currentVersionId, mode)
})
