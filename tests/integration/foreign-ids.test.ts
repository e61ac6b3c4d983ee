import { createHash } from 'node:crypto'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEFAULT_ORGANISATION_SETTINGS, Organisation, Photo, User, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { uniqueEmail } from '../support/outbox'
import { type Client, DEMO, baseUrl, demoUser, freshClient } from '../support/server'

// Visit and photo ids are made by tablets. An enumerator of a second, invented organisation sends ids that the
// demo organisation's rows already hold: the answers must be exactly those for ids nobody holds, and neither
// organisation's data may change because of the other's.
let demoEnumerator: Client
let otherEnumerator: Client
let demoRound: TestRound
let otherRound: TestRound

async function personOf(organisationId: number, role: 'coordinator' | 'enumerator', name: string) {
  const { passwordHash } = (await User.findOne({ where: { email: demoUser('admin').email } }))!
  const user = await User.create({ organisationId, email: uniqueEmail(`marula-${role}`), name, role, passwordHash, lastSignInAt: null })
  const client = freshClient()
  await client.signIn(user.email, DEMO.password)
  return { user, client }
}

beforeAll(async () => {
  testDatabase()
  const suffix = Math.random().toString(36).slice(2, 8)
  const organisation = await Organisation.create({ name: 'Marula Flats Farmer Network', slug: `marula-flats-${suffix}`, settings: DEFAULT_ORGANISATION_SETTINGS })
  const otherCoordinator = await personOf(organisation.id, 'coordinator', 'Thandeka Ribeiro')
  const other = await personOf(organisation.id, 'enumerator', 'Jonas Okafor-Lind')
  otherEnumerator = other.client
  otherRound = await makeRound(otherCoordinator.client, other.user.id)
  const demoCoordinator = freshClient()
  demoEnumerator = freshClient()
  await demoCoordinator.signIn(demoUser('coordinator').email)
  await demoEnumerator.signIn(demoUser('enumerator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  demoRound = await makeRound(demoCoordinator, me!.id)
})
afterAll(closeTestDatabase)

const sync = (client: Client, visits: unknown[]) => client.post<SyncBody>('/api/sync/visits', { visits })
const sha = (b: Buffer) => createHash('sha256').update(b).digest('hex')
const jpeg = (fill: number) => Buffer.concat([Buffer.from([0xFF, 0xD8, 0xFF, 0xE0]), Buffer.alloc(2000, fill)])
const putPhoto = (client: Client, photoId: string, visitId: string, body: Buffer) =>
  fetch(`${baseUrl()}/api/photos/${photoId}?visitId=${visitId}&sha256=${sha(body)}`, {
    method: 'PUT', headers: { 'content-type': 'image/jpeg', 'cookie': client.cookieHeader(), 'x-forwarded-for': '10.7.7.7' }, body
  })

describe('ids another organisation holds', () => {
  it('a visit id held elsewhere is answered and stored as a new id; the other visit is untouched', async () => {
    const held = makeVisit(demoRound)
    expect((await sync(demoEnumerator, [held])).body.counts.stored).toBe(1)
    const before = await Visit.findByPk(held.id, { raw: true })

    const newId = makeVisit(otherRound)
    const sameId = makeVisit(otherRound, { id: held.id })
    const answer = await sync(otherEnumerator, [newId, sameId])
    expect(answer.status).toBe(200)
    expect(answer.body.results).toEqual([
      { id: newId.id, status: 'stored', version: 1 },
      { id: held.id, status: 'stored', version: 1 }
    ])
    expect(await Visit.findByPk(held.id, { raw: true })).toEqual(before)
    // The second organisation's tablet sees its visit under its own id; the demo tablet still sees its own.
    const theirs = await otherEnumerator.get<{ visits: Array<{ id: string, roundId: number }> }>('/api/sync/visits')
    expect(theirs.body.visits.filter(v => v.id === held.id).map(v => v.roundId)).toEqual([otherRound.roundId])
    const ours = await demoEnumerator.get<{ visits: Array<{ id: string, roundId: number }> }>('/api/sync/visits')
    expect(ours.body.visits.filter(v => v.id === held.id).map(v => v.roundId)).toEqual([demoRound.roundId])
    // A resend is a duplicate, an edit an update, each of the right row.
    expect((await sync(otherEnumerator, [sameId])).body.results[0]).toMatchObject({ id: held.id, status: 'duplicate' })
    const edited = { ...sameId, farmCode: 'MF-EDITED-1', baseVersion: 1 }
    expect((await sync(otherEnumerator, [edited])).body.results[0]).toMatchObject({ id: held.id, status: 'stored', version: 2 })
    expect(await Visit.findByPk(held.id, { raw: true })).toEqual(before)
    expect(await Visit.count({ where: { deviceId: held.id, farmCode: 'MF-EDITED-1' } })).toBe(1)
  })

  it('a photo id held elsewhere is answered and stored as a new id; the other photo is untouched', async () => {
    const demoVisit = makeVisit(demoRound)
    const otherVisit = makeVisit(otherRound)
    await sync(demoEnumerator, [demoVisit])
    await sync(otherEnumerator, [otherVisit])
    const photoId = crypto.randomUUID()
    const first = await putPhoto(demoEnumerator, photoId, demoVisit.id, jpeg(1))
    expect(first.status).toBe(200)
    const before = await Photo.findByPk(photoId, { raw: true })

    const freshAnswer = await putPhoto(otherEnumerator, crypto.randomUUID(), otherVisit.id, jpeg(2))
    const heldAnswer = await putPhoto(otherEnumerator, photoId, otherVisit.id, jpeg(3))
    expect(heldAnswer.status).toBe(freshAnswer.status)
    const heldBody = await heldAnswer.json() as { id: string, status: string }
    expect(heldBody).toEqual({ id: photoId, status: 'stored' })
    expect(await Photo.findByPk(photoId, { raw: true })).toEqual(before)
    const stored = await Photo.findOne({ where: { deviceId: photoId } })
    expect(stored?.status).toBe('stored')
    expect(stored?.sha256).toBe(sha(jpeg(3)))
    // Their visit id in the demo organisation's namespace is unknown, as for any id nobody holds.
    const unknown = await putPhoto(demoEnumerator, crypto.randomUUID(), otherVisit.id, jpeg(4))
    const nobody = await putPhoto(demoEnumerator, crypto.randomUUID(), crypto.randomUUID(), jpeg(4))
    const said = async (r: Response) => [r.status, ((await r.json()) as { message: string }).message]
    expect(await said(unknown)).toEqual(await said(nobody))
  })
})
