// The audit log as a CSV file, with the same filters as the page.
export default defineRoleHandler(['admin'], async (event, user) => {
  const { page: _page, pageSize: _size, ...query } = await getValidatedQuery(event, validateWith(auditQuerySchema))
  const csv = await auditCsv(user.organisationId, query)
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="audit-log-${new Date().toISOString().slice(0, 10)}.csv"`)
  return csv
})
