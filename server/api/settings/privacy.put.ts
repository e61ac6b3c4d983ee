// Changes the personal data rules (retention periods, what an erasure keeps); audited.
export default defineRoleHandler(['admin'], async (event, admin) => {
  const input = await readValidatedBody(event, validateWith(privacySettingsSchema))
  return updatePrivacySettings(event, admin, input)
})
