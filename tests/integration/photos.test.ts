import { createHash, randomUUID } from 'node:crypto'
import { request } from 'node:http'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Photo, User } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { keysUnder, objectSize } from '../support/object-store'
import { type Client, baseUrl, demoUser, freshClient } from '../support/server'

let enumerator: Client
let round: TestRound
let visitId: string

beforeAll(async () => {
  testDatabase()
  const coordinator = freshClient()
  enumerator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  await enumerator.signIn(demoUser('enumerator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id)
  const visit = makeVisit(round)
  visitId = visit.id
  expect((await enumerator.post('/api/sync/visits', { visits: [visit] })).status).toBe(200)
})
afterAll(closeTestDatabase)

const sha = (b: Buffer) => createHash('sha256').update(b).digest('hex')
// A body that starts as a JPEG does (the server checks a photo by its first bytes), padded to the size wanted.
const jpeg = (size: number, fill: number) => Buffer.concat([Buffer.from([0xFF, 0xD8, 0xFF, 0xE0]), Buffer.alloc(size - 4, fill)])

function put(photoId: string, body: Buffer, { visit = visitId, type = 'image/jpeg', digest = sha(body), client = enumerator } = {}) {
  return fetch(`${baseUrl()}/api/photos/${photoId}?visitId=${visit}&sha256=${digest}`, {
    method: 'PUT',
    headers: { 'content-type': type, 'cookie': client.cookieHeader(), 'x-forwarded-for': '10.8.8.8' },
    body
  })
}

describe('photos', () => {
  it('stores a photo in the bucket under its visit and marks it stored; a resend is a duplicate', async () => {
    const bytes = jpeg(50_000, 7)
    const id = randomUUID()
    const answer = await put(id, bytes)
    expect(answer.status).toBe(200)
    expect(await answer.json()).toEqual({ id, status: 'stored' })
    const row = await Photo.findByPk(id)
    expect(row).toMatchObject({ status: 'stored', visitId, sizeBytes: 50_000, sha256: sha(bytes) })
    expect(await objectSize(row!.objectKey)).toBe(50_000)
    expect(await keysUnder('incoming/')).toEqual([])
    expect(await (await put(id, bytes)).json()).toEqual({ id, status: 'duplicate' })

    // The coordinator sees it with its visit, and can fetch the same bytes back.
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const review = await coordinator.get<{ items: Array<{ id: string, photoIds: string[] }> }>(`/api/review/visits?roundId=${round.roundId}`)
    expect(review.body.items.find(v => v.id === visitId)!.photoIds).toContain(id)
    const back = await fetch(`${baseUrl()}/api/review/photos/${id}`, { headers: { 'cookie': coordinator.cookieHeader(), 'x-forwarded-for': '10.8.8.7' } })
    expect(back.status).toBe(200)
    expect(back.headers.get('content-type')).toBe('image/jpeg')
    expect(back.headers.get('x-content-type-options')).toBe('nosniff')
    expect(back.headers.get('content-disposition')).toBe(`inline; filename="photo-${id}.jpg"`)
    expect(Buffer.from(await back.arrayBuffer()).equals(bytes)).toBe(true)
  })

  it('answers 413 to an oversized photo and stores nothing', async () => {
    const id = randomUUID()
    const answer = await put(id, jpeg(3 * 1024 * 1024 + 10, 1))
    expect(answer.status).toBe(413)
    expect((await answer.json()).message).toMatch(/larger than/)
    expect(await Photo.findByPk(id)).toBeNull()
  })

  it.each([
    ['a damaged body (checksum mismatch)', { digest: 'a'.repeat(64) }, 400],
    ['a type that is not a photo', { type: 'application/pdf' }, 415],
    ['a visit not yet synced', { visit: randomUUID() }, 404],
    ['a malformed checksum', { digest: 'abc' }, 400]
  ])('refuses %s and stores nothing', async (_what, options, status) => {
    const id = randomUUID()
    const answer = await put(id, jpeg(1000, 2), options)
    expect(answer.status).toBe(status)
    expect(await Photo.findByPk(id)).toBeNull()
  })

  it('never attaches a photo whose upload was cut off halfway; the retry stores it', async () => {
    const id = randomUUID()
    const bytes = jpeg(200_000, 9)
    await new Promise<void>((resolve) => {
      const req = request(`${baseUrl()}/api/photos/${id}?visitId=${visitId}&sha256=${sha(bytes)}`, {
        method: 'PUT',
        headers: { 'content-type': 'image/jpeg', 'content-length': bytes.length, 'cookie': enumerator.cookieHeader(), 'x-forwarded-for': '10.8.8.9' }
      })
      req.on('error', () => resolve())
      req.on('close', () => resolve())
      req.write(bytes.subarray(0, 80_000), () => setTimeout(() => req.destroy(), 50))
    })
    await new Promise(r => setTimeout(r, 300))
    expect(await Photo.count({ where: { id, status: 'stored' } })).toBe(0)
    expect(await keysUnder(`visits/${visitId}/${id}`)).toEqual([])
    const retry = await put(id, bytes)
    expect(retry.status).toBe(200)
    expect(await Photo.count({ where: { id, status: 'stored' } })).toBe(1)
  })
})
