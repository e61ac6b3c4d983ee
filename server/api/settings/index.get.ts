export default defineRoleHandler(['admin'], (_event, admin) => readSettings(admin.organisationId))
