// One guard for every request, before any route runs:
// - an /api path that exists, asked with a method none of its routes takes, answers 405 with Allow (the router
//   would otherwise hand it to the page renderer's catch-all).
// - cross-site requests are refused (403): a browser names the page's site in Sec-Fetch-Site and its origin in
//   Origin on every cross-origin POST/PUT/PATCH/DELETE, so a form or fetch on another site cannot act for a
//   signed-in person. A request with neither header comes from no browser (scripts, the tests, curl): it
//   carries no one's cookie by accident, so it is judged by its session like any other.
// - a body must be of a type its route takes (415): JSON routes take application/json only, which a plain
//   HTML form cannot send. A body that passes starts streaming in here, within its limit (request-body.ts).
// - a body for a protected route without a session cookie sealed by this server is refused (401) unread.
export default defineEventHandler(async (event) => {
  if (event.path.startsWith('/api/')) refuseWrongMethod(event)
  if (!BODY_METHODS.has(event.method)) return
  if (isCrossSite(event)) {
    throw createError({ statusCode: 403, message: 'Requests from other sites are refused. Use Furrowcast itself.' })
  }
  if (!hasBody(event)) return
  // Nobody's session, on a route that needs one: 401 before a byte of the body is read.
  if (!await mayCarryBody(event)) throw createError({ statusCode: 401, message: 'Sign in to continue.' })
  const type = (getHeader(event, 'content-type') ?? '').split(';')[0]!.trim().toLowerCase()
  const { types } = bodyRuleFor(event)
  if (!types.includes(type)) {
    throw createError({ statusCode: 415, message: `Send this request as ${types.join(' or ')}.` })
  }
  startReadingBody(event)
})

function refuseWrongMethod(event: Parameters<Parameters<typeof defineEventHandler>[0]>[0]) {
  const path = event.path.split('?')[0]!
  const allowed = allowedMethods(path)
  if (!allowed.length || allowed.includes(event.method)) return
  setResponseHeader(event, 'Allow', allowed.join(', '))
  throw createError({ statusCode: 405, message: `${path} does not take ${event.method}; it takes ${allowed.join(', ')}.` })
}

function isCrossSite(event: Parameters<Parameters<typeof defineEventHandler>[0]>[0]) {
  const site = getHeader(event, 'sec-fetch-site')
  if (site && site !== 'same-origin' && site !== 'none') return true
  const origin = getHeader(event, 'origin')
  if (origin === undefined) return false
  return !ownOrigins(event).includes(origin)
}

// The origin the browser used (from Host, or the load balancer's forwarded host when trusted) and the
// configured public address; anything else, including "null" from sandboxed frames, is another site.
function ownOrigins(event: Parameters<Parameters<typeof defineEventHandler>[0]>[0]) {
  const trust = serverConfig().FURROWCAST_TRUST_PROXY === '1'
  return [getRequestURL(event, { xForwardedHost: trust, xForwardedProto: trust }).origin, new URL(serverConfig().PUBLIC_URL).origin]
}
