// Deny by default: an /api route answers only to a live session unless it is listed here.
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
  // The same lookup requireRole uses (kept for the request), so a revoked or expired session stops here.
  if (!await currentSession(event)) throw await sessionRefusal(event)
})
