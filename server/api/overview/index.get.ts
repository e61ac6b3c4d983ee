export default defineRoleHandler(['funder', 'coordinator'], (_event, user) => publishedRounds(user))
