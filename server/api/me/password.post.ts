import { ROLES } from '#shared/utils/roles'

export default defineRoleHandler(ROLES, async (event, user) => {
  const input = await readValidatedBody(event, validateWith(changePasswordSchema))
  return changeOwnPassword(event, user, input)
})
