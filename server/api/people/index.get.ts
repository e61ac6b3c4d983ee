export default defineRoleHandler(['admin'], async (event, user) => {
  const query = await getValidatedQuery(event, validateWith(peopleQuerySchema))
  return listPeople(user.organisationId, query)
})
