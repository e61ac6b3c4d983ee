export default defineRoleHandler(['admin'], async (event, admin) => {
  const { id } = await getValidatedRouterParams(event, validateWith(personIdSchema))
  const input = await readValidatedBody(event, validateWith(personUpdateSchema))
  return updatePerson(event, admin, id, input)
})
