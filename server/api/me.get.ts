import { ROLES } from '#shared/utils/roles'

export default defineRoleHandler(ROLES, (_event, user) => sessionUserOf(user))
