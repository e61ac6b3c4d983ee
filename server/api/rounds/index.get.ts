export default defineRoleHandler(['coordinator'], async (_event, user) => listRounds(user.organisationId))
