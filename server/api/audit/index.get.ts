export default defineRoleHandler(['admin'], async (event, user) => {
  const query = await getValidatedQuery(event, validateWith(auditQuerySchema))
  return listAudit(user.organisationId, query)
})
