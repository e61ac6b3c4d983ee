import { readFileSync } from 'node:fs'
import { QueryTypes } from 'sequelize'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { restartMariadb, runningMariadbPid } from '../../scripts/lib/mariadb.mjs'
import { User, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { type Answer, type Client, demoUser, freshClient } from '../support/server'

// The test stack's own mariadbd killed, frozen, and raced: what the tablets see, and what is stored.
// Runs only when `npm test` started that server itself (its pid file is under .data/), and leaves it running.
const pid = runningMariadbPid()
const dbPort = Number(new URL(process.env.DATABASE_URL ?? 'mariadb://x@127.0.0.1:1/x').port)
let round: TestRound

async function enumerator(): Promise<Client> {
  const client = freshClient()
  await client.signIn(demoUser('enumerator').email)
  return client
}

/** One request with a hard limit, so a hung answer fails the test instead of stalling it. */
async function post(client: Client, visits: unknown[]): Promise<Answer<SyncBody> | 'hung'> {
  const timer = new Promise<'hung'>(resolve => setTimeout(() => resolve('hung'), 15_000).unref())
  return Promise.race([client.post<SyncBody>('/api/sync/visits', { visits }), timer])
}

/**
 * A device's sync loop: sends its batches in turn and retries a batch after 503 or 429 until it is taken.
 * Waits a short pause rather than the full Retry-After so the test stays short; the statuses are recorded.
 */
async function device(client: Client, batches: unknown[][], statuses: number[]) {
  for (const batch of batches) {
    for (;;) {
      const answer = await post(client, batch)
      if (answer === 'hung') throw new Error('a sync request hung for 15 s')
      statuses.push(answer.status)
      if (answer.status === 200) {
        expect(answer.body.counts.stored + answer.body.counts.duplicate).toBe(batch.length)
        break
      }
      expect([429, 503]).toContain(answer.status)
      expect(Number(answer.headers.get('retry-after'))).toBeGreaterThan(0)
      await new Promise(resolve => setTimeout(resolve, 150 + Math.random() * 250))
    }
  }
}

async function rowsPerId(ids: string[]) {
  const rows = await testDatabase().query<{ id: string, n: number }>('SELECT id, COUNT(*) AS n FROM visits WHERE id IN (?) GROUP BY id', { replacements: [ids], type: QueryTypes.SELECT })
  return rows
}

async function waitUntil(check: () => Promise<boolean>, ms: number) {
  const until = Date.now() + ms
  while (Date.now() < until) {
    if (await check().catch(() => false)) return
    await new Promise(resolve => setTimeout(resolve, 100))
  }
  throw new Error('condition not reached in time')
}

describe.skipIf(pid === null)('sync while the database fails', () => {
  beforeAll(async () => {
    testDatabase()
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    round = await makeRound(coordinator, me!.id)
  }, 60_000)
  afterAll(async () => {
    // Whatever happened, leave the server running and awake for the tests after this file.
    const current = runningMariadbPid()
    if (current !== null) process.kill(current, 'SIGCONT')
    else await restartMariadb(dbPort)
    await closeTestDatabase()
  }, 120_000)

  it('answers 503 while mariadbd is killed and restarted; after retrying every visit is stored exactly once', async () => {
    const clients = await Promise.all(Array.from({ length: 4 }, enumerator))
    const batches = clients.map(() => Array.from({ length: 6 }, () => Array.from({ length: 40 }, () => makeVisit(round))))
    const ids = batches.flat(2).map(v => v.id)
    const statuses: number[] = []
    const devices = Promise.all(clients.map((c, i) => device(c, batches[i]!, statuses)))
    // Kill once the stream is flowing (some batches stored), and keep it down until the tablets have seen 503s.
    await waitUntil(async () => statuses.filter(s => s === 200).length >= 3, 20_000)
    process.kill(runningMariadbPid()!, 'SIGKILL')
    await waitUntil(async () => statuses.includes(503), 10_000)
    const health = await fetch(`${process.env.FURROWCAST_TEST_URL}/api/health`)
    expect(health.status).toBe(503)
    expect(await health.json()).toMatchObject({ ok: false, database: 'down' })
    await restartMariadb(dbPort)
    await devices

    expect(statuses.filter(s => s >= 500 && s !== 503)).toEqual([])
    expect(statuses).toContain(503)
    const rows = await rowsPerId(ids)
    expect(rows.length).toBe(ids.length)
    expect(rows.every(r => Number(r.n) === 1)).toBe(true)
    expect((await fetch(`${process.env.FURROWCAST_TEST_URL}/api/health`)).status).toBe(200)
  }, 120_000)

  it('answers 503 within the timeouts while mariadbd is frozen, and serves again once it thaws', async () => {
    const client = await enumerator()
    const visits = Array.from({ length: 20 }, () => makeVisit(round))
    const frozen = runningMariadbPid()!
    process.kill(frozen, 'SIGSTOP')
    const stoppedAt = Date.now()
    // The state letter in /proc: T = stopped, so the answers below really come from a frozen database.
    const state = () => readFileSync(`/proc/${frozen}/stat`, 'utf8').split(') ')[1]?.[0]
    await waitUntil(async () => state() === 'T', 2000)
    try {
      const timed = async <T>(request: () => Promise<T>) => {
        const started = Date.now()
        const answer = await request()
        return { answer, ms: Date.now() - started }
      }
      const [sync, health, me] = await Promise.all([
        timed(() => post(client, visits)),
        timed(() => fetch(`${process.env.FURROWCAST_TEST_URL}/api/health`)),
        timed(() => client.get('/api/me'))
      ])
      // DATABASE_SOCKET_TIMEOUT_MS is 3 s, the pool's acquire timeout 2 s: far below the 10 s freeze.
      for (const { ms } of [sync, health, me]) expect(ms).toBeLessThan(8000)
      expect(sync.answer === 'hung' ? 'hung' : sync.answer.status).toBe(503)
      expect(health.answer.status, `health after ${health.ms} ms: ${await health.answer.clone().text()}`).toBe(503)
      expect(me.answer.status).toBe(503)
      expect((sync.answer as Answer).headers.get('retry-after')).toMatch(/^\d+$/)
      await new Promise(resolve => setTimeout(resolve, Math.max(0, 10_000 - (Date.now() - stoppedAt))))
    }
    finally {
      process.kill(frozen, 'SIGCONT')
    }
    await waitUntil(async () => (await fetch(`${process.env.FURROWCAST_TEST_URL}/api/health`)).status === 200, 20_000)
    await device(client, [visits], [])
    const rows = await rowsPerId(visits.map(v => v.id))
    expect(rows.length).toBe(20)
    expect(rows.every(r => Number(r.n) === 1)).toBe(true)
  }, 90_000)

  it('takes the same batch re-sent by 5 clients at once without any 5xx, one row per visit', async () => {
    const clients = await Promise.all(Array.from({ length: 5 }, enumerator))
    const batch = Array.from({ length: 100 }, () => makeVisit(round))
    const statuses: number[] = []
    await Promise.all(clients.map(c => device(c, [batch], statuses)))
    expect(statuses.filter(s => s >= 500)).toEqual([])
    const rows = await rowsPerId(batch.map(v => v.id))
    expect(rows.length).toBe(100)
    expect(rows.every(r => Number(r.n) === 1)).toBe(true)
    expect(await Visit.count({ where: { id: batch.map(v => v.id) } })).toBe(100)
  }, 60_000)
})
