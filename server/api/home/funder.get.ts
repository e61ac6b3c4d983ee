export default defineRoleHandler(['funder'], (_event, user) => funderHome(user))
