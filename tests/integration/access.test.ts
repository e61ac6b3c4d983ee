import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { User } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type Client, DEMO, demoUser, freshClient } from '../support/server'

// Every protected route, and which roles it opens to. Adding a route means adding it here. A route that
// needs a body answers `allowed` (400) to a permitted role that sends none: the role check comes first.
const ROUTES: Array<{ method: 'GET' | 'POST' | 'PUT' | 'PATCH', path: string, roles: string[], allowed?: number }> = [
  { method: 'GET', path: '/api/me', roles: ['admin', 'coordinator', 'enumerator', 'funder'] },
  { method: 'POST', path: '/api/me/password', roles: ['admin', 'coordinator', 'enumerator', 'funder'], allowed: 400 },
  { method: 'GET', path: '/api/people', roles: ['admin'] },
  { method: 'POST', path: '/api/people/invitations', roles: ['admin'], allowed: 400 },
  { method: 'PATCH', path: '/api/people/1', roles: ['admin'], allowed: 400 },
  { method: 'GET', path: '/api/audit', roles: ['admin'] },
  { method: 'GET', path: '/api/settings', roles: ['admin'] },
  { method: 'PUT', path: '/api/settings', roles: ['admin'], allowed: 400 },
  { method: 'GET', path: '/api/outbox', roles: ['admin'] }
]

// Public routes answer without a session (here 400 to an empty body), never 401.
const PUBLIC: Array<{ method: 'POST', path: string }> = [
  { method: 'POST', path: '/api/auth/link' },
  { method: 'POST', path: '/api/auth/password' },
  { method: 'POST', path: '/api/auth/forgot' }
]

const clients = new Map<string, Client>()

beforeAll(async () => {
  testDatabase()
  for (const user of DEMO.users) {
    const client = freshClient()
    await client.signIn(user.email)
    clients.set(user.role, client)
  }
})
afterAll(closeTestDatabase)

describe('every route checks the role on the server', () => {
  for (const route of ROUTES) {
    it(`${route.method} ${route.path} without a session answers 401`, async () => {
      const answer = await freshClient().request(route.method, route.path)
      expect(answer.status).toBe(401)
      expect(answer.body).toMatchObject({ message: 'Sign in to continue.' })
    })
    for (const user of DEMO.users) {
      const allowed = route.roles.includes(user.role)
      const expected = allowed ? route.allowed ?? 200 : 403
      it(`${route.method} ${route.path} as ${user.role} answers ${expected}`, async () => {
        const answer = await clients.get(user.role)!.request(route.method, route.path)
        expect(answer.status).toBe(expected)
        if (!allowed) expect(answer.body.message).toBe('Your role does not allow this.')
      })
    }
  }

  for (const route of PUBLIC) {
    it(`${route.method} ${route.path} is public: 400 to an empty body, not 401`, async () => {
      const answer = await freshClient().request(route.method, route.path, {})
      expect(answer.status).toBe(400)
    })
  }

  it('answers 401 to an unknown /api path without a session (deny by default) and 404 with one', async () => {
    expect((await freshClient().get('/api/no-such-thing')).status).toBe(401)
    expect((await clients.get('admin')!.get('/api/no-such-thing')).status).toBe(404)
  })

  it('ignores a forged cookie', async () => {
    const client = freshClient()
    const answer = await client.request('GET', '/api/me', undefined)
    expect(answer.status).toBe(401)
    const forged = await fetch(`${process.env.FURROWCAST_TEST_URL}/api/me`, { headers: { cookie: 'nuxt-session=Fe26.2**forged**value' } })
    expect(forged.status).toBe(401)
  })

  it('follows a role change made in the database at the next request', async () => {
    const email = demoUser('coordinator').email
    const client = freshClient()
    await client.signIn(email)
    expect((await client.get('/api/people')).status).toBe(403)
    await User.update({ role: 'admin' }, { where: { email } })
    try {
      expect((await client.get('/api/people')).status).toBe(200)
    }
    finally {
      await User.update({ role: 'coordinator' }, { where: { email } })
    }
    expect((await client.get('/api/people')).status).toBe(403)
  })
})

describe('listing routes validate their query', () => {
  it.each([
    ['page=abc'],
    ['page=0'],
    ['pageSize=1000'],
    ['role=wizard'],
    ['status=maybe']
  ])('GET /api/people?%s answers 400 with a message', async (query) => {
    const answer = await clients.get('admin')!.get(`/api/people?${query}`)
    expect(answer.status).toBe(400)
    expect(answer.body.message).toMatch(/\w+: /)
  })

  it('filters people by role and search, paginated on the server', async () => {
    const admin = clients.get('admin')!
    // Other tests invite people at @team-test.example; the demo organisation's own people are at its domain.
    const byRole = await admin.get<{ items: Array<{ role: string }>, total: number }>('/api/people?role=enumerator&search=kestrel-valley.example')
    expect(byRole.status).toBe(200)
    expect(byRole.body.total).toBe(1)
    expect(byRole.body.items[0]!.role).toBe('enumerator')
    const bySearch = await admin.get<{ items: Array<{ email: string }> }>(`/api/people?search=${encodeURIComponent('Ndlela')}`)
    expect(bySearch.body.items.map(p => p.email)).toEqual([demoUser('coordinator').email])
    const paged = await admin.get<{ items: unknown[], total: number, pageSize: number }>('/api/people?pageSize=5&page=2')
    expect(paged.body.items).toHaveLength(Math.min(5, Math.max(0, paged.body.total - 5)))
  })

  it('shows the audit log to admins, newest first and filtered by action', async () => {
    const answer = await clients.get('admin')!.get<{ items: Array<{ id: number, action: string }> }>('/api/audit?action=signin')
    expect(answer.status).toBe(200)
    expect(answer.body.items.length).toBeGreaterThan(0)
    expect(answer.body.items.every(e => e.action.startsWith('signin'))).toBe(true)
    const ids = answer.body.items.map(e => e.id)
    expect([...ids].sort((a, b) => b - a)).toEqual(ids)
  })
})
