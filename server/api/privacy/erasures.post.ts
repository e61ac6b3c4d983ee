// Erases one farm's personal data everywhere it lives, at the farmer's request; audited with the reason.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const body = await readValidatedBody(event, validateWith(erasureRequestSchema))
  return eraseFarm(event, user, body)
})
