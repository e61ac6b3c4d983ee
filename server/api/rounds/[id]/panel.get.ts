import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// The same farms across rounds: this round and the `with` rounds, one row per registered farm × round (zip with a
// read-me, or the CSV alone). Pseudonymised by default; identifying only with a reason, audited as such.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const query = await getValidatedQuery(event, validateWith(panelExportQuerySchema))
  const family = await roundFamily(user.organisationId, [id, ...query.with])
  const mode = { identifying: query.identifying === '1', precision: query.precision }
  const rounds = family.rounds.map(r => r.id)
  await audit(event, user, mode.identifying
    ? { action: 'round.export_identifying', entityType: 'round', entityId: id, details: { part: `panel-${query.part}`, rounds, reason: query.reason } }
    : { action: 'round.export', entityType: 'round', entityId: id, details: { part: `panel-${query.part}`, rounds, precision: query.precision } })
  const name = `furrowcast-panel-${rounds.join('-')}${mode.identifying ? '-identifying' : ''}`
  if (query.part === 'all') {
    setResponseHeader(event, 'content-type', 'application/zip')
    setResponseHeader(event, 'content-disposition', `attachment; filename="${name}.zip"`)
    return Buffer.from(await panelZip(family, user.organisationId, mode))
  }
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="${name}.csv"`)
  return (await panelCsv(family, user.organisationId, mode)).csv
})
