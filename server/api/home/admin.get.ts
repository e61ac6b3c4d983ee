export default defineRoleHandler(['admin'], (_event, user) => adminHome(user))
