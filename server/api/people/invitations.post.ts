export default defineRoleHandler(['admin'], async (event, admin) => {
  const input = await readValidatedBody(event, validateWith(inviteSchema))
  setResponseStatus(event, 201)
  return inviteUser(event, admin, input)
})
