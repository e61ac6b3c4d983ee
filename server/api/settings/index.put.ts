export default defineRoleHandler(['admin'], async (event, admin) => {
  const input = await readValidatedBody(event, validateWith(settingsSchema))
  return updateSettings(event, admin, input)
})
