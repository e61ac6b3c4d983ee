import { readFileSync, readdirSync, statSync } from 'node:fs'
import path from 'node:path'
import { describe, expect, it } from 'vitest'

// Deny by default, checked on the source: every API route file must declare who may call it.
const API = path.resolve(__dirname, '../../server/api')
const PUBLIC_ROUTES = ['auth/signin.post.ts', 'health.get.ts', 'auth/link.post.ts', 'auth/password.post.ts', 'auth/forgot.post.ts', 'field/devices/status.post.ts']
// Answers 404 for every method on paths no route matches, so /api never falls through to the pages.
const CATCH_ALL = '[...path].ts'

function routeFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const full = path.join(dir, name)
    return statSync(full).isDirectory() ? routeFiles(full) : [path.relative(API, full)]
  })
}

describe('API route files', () => {
  const files = routeFiles(API)

  it('exist', () => {
    expect(files.length).toBeGreaterThan(3)
  })

  it.each(files)('%s declares its roles (or is knowingly public)', (file) => {
    const source = readFileSync(path.join(API, file), 'utf8')
    if (PUBLIC_ROUTES.includes(file)) {
      expect(source).toMatch(/export default definePublicHandler\(/)
    }
    else {
      expect(source).toMatch(/export default defineRoleHandler\(/)
      expect(source).not.toMatch(/definePublicHandler|defineEventHandler/)
    }
  })

  it.each(files.filter(f => f !== CATCH_ALL))('%s is named after its HTTP method', (file) => {
    expect(file).toMatch(/\.(get|post|put|patch|delete)\.ts$/)
  })

  it('the deny-by-default middleware lists exactly the public routes', () => {
    // The list lives in server/utils/public-api.ts, read by the deny-by-default middleware and the body guard.
    const middleware = readFileSync(path.resolve(API, '../utils/public-api.ts'), 'utf8')
    expect(middleware).toContain('\'POST /api/auth/signin\'')
    expect(middleware).toContain('\'GET /api/health\'')
    for (const file of PUBLIC_ROUTES) {
      const [, route, method] = /^(.*?)(?:\/index)?\.(get|post)\.ts$/.exec(file)!
      expect(middleware).toContain(`'${method!.toUpperCase()} /api/${route}'`)
    }
    const listed = [...middleware.matchAll(/'(GET|POST) \/api\/([^']+)'/g)].map(m => m[2])
    // Only the public route files and nuxt-auth-utils' own session read are open.
    expect(listed.sort()).toEqual([...PUBLIC_ROUTES.map(f => f.replace(/\.(get|post)\.ts$/, '')), '_auth/session'].sort())
  })

  // Bodies are read once, with a limit, by server/middleware/03.request-body.ts; a route that read the request
  // stream itself would bypass it (and the JSON shape limits).
  it.each(files)('%s reads its body only through h3\'s readers', (file) => {
    const source = readFileSync(path.join(API, file), 'utf8')
    expect(source).not.toMatch(/event\.node\.req\b|getRequestWebStream|toWebRequest|\.req\.on\(/)
  })

  it('no service reads the request stream except the bounded reader', () => {
    const utils = path.resolve(API, '../utils')
    const readers = readdirSync(utils).filter(name => /event\.node\.req\b|getRequestWebStream|toWebRequest/.test(readFileSync(path.join(utils, name), 'utf8')))
    expect(readers).toEqual(['request-body.ts'])
  })

  it('every route with its own body limit exists', () => {
    const rules = readFileSync(path.resolve(API, '../utils/request-rules.ts'), 'utf8')
    const found = [...rules.matchAll(/method: '(\w+)',\s*path: \/(.+)\/,/g)]
    expect(found.length).toBeGreaterThanOrEqual(3)
    const routes = files.filter(f => f !== CATCH_ALL).map((f) => {
      const [, route, method] = /^(.*?)(?:\/index)?\.(\w+)\.ts$/.exec(f)!
      return { method: method!.toUpperCase(), path: `/api/${route!.replace(/\[[^\]]+\]/g, 'x1')}` }
    })
    for (const [, method, pattern] of found) {
      const regex = new RegExp(pattern!.replace(/\\\//g, '/'))
      expect(routes.some(r => r.method === method && regex.test(r.path)), `${method} ${pattern}`).toBe(true)
    }
  })
})
