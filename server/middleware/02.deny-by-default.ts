// Deny by default: an /api route answers only to a signed-in user unless it is listed here.
// Each protected route then checks the role itself through defineRoleHandler.
const PUBLIC_API = new Set([
  'POST /api/auth/signin',
  'POST /api/auth/link',
  'POST /api/auth/password',
  'POST /api/auth/forgot',
  'GET /api/health',
  'GET /api/_auth/session'
])

export default defineEventHandler(async (event) => {
  if (!event.path.startsWith('/api/')) return
  const path = event.path.split('?')[0]
  if (PUBLIC_API.has(`${event.method} ${path}`)) return
  const session = await getUserSession(event)
  if (!session.user) throw createError({ statusCode: 401, message: 'Sign in to continue.' })
})
