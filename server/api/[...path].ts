import { ROLES } from '#shared/utils/roles'

// An /api path that no route matches: a clear 404 instead of falling through to the page renderer. (A known path
// asked with the wrong method is answered 405 with Allow by server/middleware/00.request-guard.ts.)
export default defineRoleHandler(ROLES, (event) => {
  throw createError({ statusCode: 404, message: `There is no API route ${event.method} ${event.path.split('?')[0]}.` })
})
