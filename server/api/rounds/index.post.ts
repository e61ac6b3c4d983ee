export default defineRoleHandler(['coordinator'], async (event, user) => {
  const body = await readValidatedBody(event, validateWith(roundCreateSchema))
  return createRound(event, user, body)
})
