export default defineRoleHandler(['coordinator'], async (_event, user) => listVillages(user.organisationId))
