// @ts-expect-error Nitro's build-time list of route handlers; it publishes no types for this virtual module.
import { handlers } from '#nitro-internal-virtual/server-handlers'

interface HandlerEntry { route?: string, method?: string, middleware?: boolean }

// The HTTP methods each /api route answers, from the same list Nitro builds its router from; a route
// `/api/rounds/:id` becomes the pattern ^/api/rounds/[^/]+$.
let routes: Array<{ pattern: RegExp, method: string }> | undefined

function apiRoutes() {
  routes ??= (handlers as HandlerEntry[])
    .filter(entry => !entry.middleware && entry.method && entry.route?.startsWith('/api/') && !entry.route.includes('**'))
    .map(entry => ({
      pattern: new RegExp(`^${entry.route!.split('/').map(part => part.startsWith(':') ? '[^/]+' : part.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')).join('/')}$`),
      method: entry.method!.toUpperCase()
    }))
  return routes
}

/** The methods some route answers on this path (empty: no route has the path at all). */
export function allowedMethods(path: string): string[] {
  const found = new Set(apiRoutes().filter(route => route.pattern.test(path)).map(route => route.method))
  if (found.has('GET')) found.add('HEAD')
  return [...found].sort()
}
