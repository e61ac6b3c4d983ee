import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Round, User, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type Client, DEMO, demoUser, freshClient } from '../support/server'

// Every protected route, and which roles it opens to. Adding a route means adding it here.
// `ok` is what an allowed role gets when calling without a body (400: the role passed, the input did not).
// :round and :visit stand for the demo round and one of its visits; :uuid for an id nothing has.
const ROUTES: Array<{ method: 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE', path: string, roles: string[], ok?: number }> = [
  { method: 'GET', path: '/api/me', roles: ['admin', 'coordinator', 'enumerator', 'funder'] },
  { method: 'POST', path: '/api/me/password', roles: ['admin', 'coordinator', 'enumerator', 'funder'], ok: 400 },
  { method: 'GET', path: '/api/me/sessions', roles: ['admin', 'coordinator', 'enumerator', 'funder'] },
  { method: 'DELETE', path: '/api/me/sessions/999999', roles: ['admin', 'coordinator', 'enumerator', 'funder'], ok: 404 },
  { method: 'DELETE', path: '/api/people/999999/sessions', roles: ['admin'], ok: 404 },
  { method: 'GET', path: '/api/people', roles: ['admin'] },
  { method: 'POST', path: '/api/people/invitations', roles: ['admin'], ok: 400 },
  { method: 'PATCH', path: '/api/people/1', roles: ['admin'], ok: 400 },
  { method: 'GET', path: '/api/audit', roles: ['admin'] },
  { method: 'GET', path: '/api/audit/export', roles: ['admin'] },
  { method: 'GET', path: '/api/settings', roles: ['admin'] },
  { method: 'PUT', path: '/api/settings', roles: ['admin'], ok: 400 },
  { method: 'GET', path: '/api/outbox', roles: ['admin'] },
  { method: 'GET', path: '/api/field/setup', roles: ['enumerator'] },
  { method: 'GET', path: '/api/sync/visits', roles: ['enumerator'] },
  { method: 'POST', path: '/api/sync/visits', roles: ['enumerator'], ok: 400 },
  { method: 'PUT', path: '/api/photos/:uuid', roles: ['enumerator'], ok: 400 },
  { method: 'GET', path: '/api/rounds', roles: ['coordinator'] },
  { method: 'POST', path: '/api/rounds', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/rounds/:round', roles: ['coordinator'] },
  { method: 'PATCH', path: '/api/rounds/:round', roles: ['coordinator'], ok: 400 },
  { method: 'PUT', path: '/api/rounds/:round/questionnaire', roles: ['coordinator'], ok: 400 },
  { method: 'PUT', path: '/api/rounds/:round/villages', roles: ['coordinator'], ok: 400 },
  { method: 'PUT', path: '/api/rounds/:round/assignments', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/rounds/:round/sample', roles: ['coordinator'] },
  { method: 'PUT', path: '/api/rounds/:round/sample/999999', roles: ['coordinator'], ok: 400 },
  { method: 'POST', path: '/api/field/sample-outcomes', roles: ['enumerator'], ok: 400 },
  { method: 'POST', path: '/api/rounds/:round/imports/preview', roles: ['coordinator'], ok: 400 },
  { method: 'POST', path: '/api/rounds/:round/imports', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/villages', roles: ['coordinator'] },
  { method: 'POST', path: '/api/villages', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/review/visits', roles: ['coordinator'] },
  { method: 'POST', path: '/api/review/visits/:visit', roles: ['coordinator'], ok: 400 },
  { method: 'POST', path: '/api/review/accept-unflagged', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/review/photos/:uuid', roles: ['coordinator'], ok: 404 },
  { method: 'GET', path: '/api/models?roundId=:round', roles: ['coordinator'] },
  { method: 'POST', path: '/api/models', roles: ['coordinator'], ok: 400 },
  { method: 'POST', path: '/api/models/preview', roles: ['coordinator'], ok: 400 },
  { method: 'POST', path: '/api/models/plots', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/models/questions?roundId=:round', roles: ['coordinator'] },
  { method: 'GET', path: '/api/models/compare?ids=999998,999999', roles: ['coordinator'], ok: 404 },
  { method: 'GET', path: '/api/models/999999', roles: ['coordinator'], ok: 404 },
  { method: 'POST', path: '/api/models/999999/rerun', roles: ['coordinator'], ok: 404 },
  { method: 'POST', path: '/api/models/999999/scenarios', roles: ['coordinator'], ok: 400 },
  { method: 'POST', path: '/api/models/999999/publish', roles: ['coordinator'], ok: 400 },
  { method: 'POST', path: '/api/models/999999/publish-preview', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/models/999999/export', roles: ['coordinator'], ok: 404 },
  { method: 'GET', path: '/api/publications?roundId=:round', roles: ['coordinator'] },
  { method: 'DELETE', path: '/api/publications/999999', roles: ['coordinator'], ok: 404 },
  { method: 'GET', path: '/api/overview', roles: ['funder', 'coordinator'] },
  { method: 'GET', path: '/api/home/coordinator', roles: ['coordinator'] },
  { method: 'GET', path: '/api/home/funder', roles: ['funder'] },
  { method: 'GET', path: '/api/home/admin', roles: ['admin'] },
  { method: 'GET', path: '/api/overview/999999', roles: ['funder', 'coordinator'], ok: 404 },
  { method: 'GET', path: '/api/field/model?roundId=:round', roles: ['enumerator'] },
  { method: 'GET', path: '/api/rounds/:round/export', roles: ['coordinator'] },
  { method: 'GET', path: '/api/rounds/:round/panel', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/review/visits/:visit/other-rounds', roles: ['coordinator'] },
  { method: 'GET', path: '/api/models/other-rounds?roundId=:round', roles: ['coordinator'] },
  { method: 'GET', path: '/api/privacy/farm', roles: ['coordinator'], ok: 400 },
  { method: 'POST', path: '/api/privacy/erasures', roles: ['coordinator'], ok: 400 },
  { method: 'GET', path: '/api/settings/privacy', roles: ['admin'] },
  { method: 'PUT', path: '/api/settings/privacy', roles: ['admin'], ok: 400 },
  { method: 'POST', path: '/api/settings/privacy/purge', roles: ['admin'] }
]

// Public routes answer without a session (here 400 to an empty body), never 401.
const PUBLIC: Array<{ method: 'POST', path: string }> = [
  { method: 'POST', path: '/api/auth/link' },
  { method: 'POST', path: '/api/auth/password' },
  { method: 'POST', path: '/api/auth/forgot' }
]
const placeholders: Record<string, string> = { ':uuid': '00000000-0000-4000-8000-000000000000' }
const resolve = (path: string) => path.replace(/:[a-z]+/g, p => placeholders[p] ?? p)

const clients = new Map<string, Client>()

beforeAll(async () => {
  testDatabase()
  const demoRound = await Round.findOne({ where: { status: 'open' }, order: [['id', 'ASC']] })
  placeholders[':round'] = String(demoRound!.id)
  placeholders[':visit'] = (await Visit.findOne({ where: { roundId: demoRound!.id } }))!.id
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
      const answer = await freshClient().request(route.method, resolve(route.path))
      expect(answer.status).toBe(401)
      expect(answer.body).toMatchObject({ message: 'Sign in to continue.' })
    })
    for (const user of DEMO.users) {
      const allowed = route.roles.includes(user.role)
      it(`${route.method} ${route.path} as ${user.role} answers ${allowed ? route.ok ?? 200 : 403}`, async () => {
        const answer = await clients.get(user.role)!.request(route.method, resolve(route.path))
        expect(answer.status).toBe(allowed ? route.ok ?? 200 : 403)
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
