import type { H3Event } from 'h3'

// The /api routes that answer without a session; every other /api route is denied by default.
const PUBLIC_API = new Set([
  'POST /api/auth/signin',
  'POST /api/auth/link',
  'POST /api/auth/password',
  'POST /api/auth/forgot',
  'GET /api/health',
  'POST /api/field/devices/status',
  'GET /api/_auth/session'
])

export function isPublicApi(event: H3Event): boolean {
  return PUBLIC_API.has(`${event.method} ${event.path.split('?')[0]}`)
}

/**
 * Whether a request to a protected route carries a session cookie sealed by this server (no database asked).
 * Without one, the request is refused before its body is read, so an anonymous caller cannot make the server
 * read a body up to the route's limit; a sealed but ended session is refused by the full check after.
 */
export async function mayCarryBody(event: H3Event): Promise<boolean> {
  if (!event.path.startsWith('/api/') || isPublicApi(event)) return true
  return typeof (await getUserSession(event)).secure?.token === 'string'
}
