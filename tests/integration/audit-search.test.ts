import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, DEFAULT_ORGANISATION_SETTINGS, Organisation, Round, User, Village } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { uniqueEmail } from '../support/outbox'
import { type Client, DEMO, demoUser, freshClient } from '../support/server'

// The audit log's search box, as an admin types into it: any part of a name or word, in any case, across who did
// it, what was done and to which record. An invented organisation of its own, so the counts are exact.
let admin: Client
const ids: Record<string, number> = {}

beforeAll(async () => {
  testDatabase()
  const suffix = Math.random().toString(36).slice(2, 8)
  const organisation = await Organisation.create({ name: 'Mopane Flats Growers', slug: `mopane-flats-${suffix}`, settings: DEFAULT_ORGANISATION_SETTINGS })
  const { passwordHash } = (await User.findOne({ where: { email: demoUser('admin').email } }))!
  const person = (role: 'admin' | 'enumerator', name: string) => User.create({
    organisationId: organisation.id, email: uniqueEmail(name.split(' ')[0]!.toLowerCase()), name, role, passwordHash, lastSignInAt: null
  })
  const boss = await person('admin', 'Nyasha Quillfeather')
  const worker = await person('enumerator', 'Ruvimbo Tembo')
  const round = await Round.create({ organisationId: organisation.id, name: 'Groundnut trial 2026', technology: 'groundnut seed', season: '2026', currentVersionId: null })
  const village = await Village.create({ organisationId: organisation.id, code: 'KSG', name: 'Kasenga', district: 'Lumezi', centreLat: -12.5, centreLon: 32.1, boundary: null })
  const entry = (actor: User, action: string, entityType: string, entityId: number) => AuditEntry.create({
    organisationId: organisation.id, actorUserId: actor.id, actorEmail: actor.email, action, entityType, entityId: String(entityId), ip: null, details: null
  })
  ids.role = (await entry(boss, 'user.role_changed', 'user', worker.id)).id
  ids.closed = (await entry(boss, 'round.closed', 'round', round.id)).id
  ids.village = (await entry(boss, 'village.create', 'village', village.id)).id
  ids.signin = (await entry(worker, 'signin', 'user', worker.id)).id
  admin = freshClient()
  await admin.signIn(boss.email, DEMO.password)
})
afterAll(closeTestDatabase)

async function found(q: string, more = '') {
  const answer = await admin.get<{ items: Array<{ id: number }>, total: number }>(`/api/audit?q=${encodeURIComponent(q)}${more}`)
  expect(answer.status).toBe(200)
  // The admin's own sign-in to this test is in the log too: only the four entries made above are counted.
  const mine = new Set(Object.values(ids))
  return answer.body.items.map(i => Number(i.id)).filter(id => mine.has(id)).sort((a, b) => a - b)
}

describe('searching the audit log', () => {
  it('finds a person by any part of their name, in any case, as the one who acted or as the record', async () => {
    expect(await found('QUILLFEATH')).toEqual([ids.role, ids.closed, ids.village])
    expect(await found('tembo')).toEqual([ids.role, ids.signin])
  })

  it('finds actions by their words, and records by their names and codes', async () => {
    expect(await found('role')).toEqual([ids.role])
    expect(await found('Closed')).toEqual([ids.closed])
    expect(await found('nut tri')).toEqual([ids.closed])
    expect(await found('kaseng')).toEqual([ids.village])
    expect(await found('ksg')).toEqual([ids.village])
    expect(await found('village')).toEqual([ids.village])
  })

  it('needs every word typed, keeps wildcards literal and combines with the other filters', async () => {
    expect(await found('closed groundnut')).toEqual([ids.closed])
    expect(await found('closed kasenga')).toEqual([])
    expect(await found('%')).toEqual([])
    expect(await found('_')).toEqual([])
    expect(await found('tembo', '&action=signin')).toEqual([ids.signin])
    expect(await found('quillfeather', '&entity=round')).toEqual([ids.closed])
    const csv = await admin.request('GET', '/api/audit/export?q=groundnut')
    expect(csv.status).toBe(200)
    expect(String(csv.body).split('\r\n').filter(Boolean)).toHaveLength(2)
  })

  it('refuses a search longer than a person types', async () => {
    expect((await admin.get(`/api/audit?q=${'a'.repeat(101)}`)).status).toBe(400)
  })
})
