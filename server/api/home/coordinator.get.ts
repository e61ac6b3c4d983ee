export default defineRoleHandler(['coordinator'], (_event, user) => coordinatorHome(user))
