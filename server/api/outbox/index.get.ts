export default defineRoleHandler(['admin'], (_event, admin) => readOutbox(admin.organisationId))
