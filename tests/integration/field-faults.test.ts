import { spawn, type ChildProcess } from 'node:child_process'
import { createServer } from 'node:net'
import path from 'node:path'
import { Transaction } from 'sequelize'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { User, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type SyncBody, type TestRound, makeRound, makeVisit } from '../support/field'
import { Client, type Client as ClientType, demoUser, freshClient } from '../support/server'

// A second app server on the same database, killed (SIGKILL) while it is writing a batch.
let round: TestRound
let coordinator: ClientType
let child: ChildProcess | undefined

function freePort(): Promise<number> {
  return new Promise((resolve) => {
    const server = createServer()
    server.listen(0, '127.0.0.1', () => {
      const port = (server.address() as { port: number }).port
      server.close(() => resolve(port))
    })
  })
}

async function startSecondServer(): Promise<string> {
  const port = await freePort()
  child = spawn(process.execPath, [path.resolve(__dirname, '../../.output/server/index.mjs')], {
    env: { ...process.env, NODE_ENV: 'production', HOST: '127.0.0.1', PORT: String(port), FURROWCAST_TRUST_PROXY: '1', FURROWCAST_SEED: 'none' },
    stdio: 'ignore'
  })
  const url = `http://127.0.0.1:${port}`
  for (let i = 0; i < 150; i++) {
    const ok = await fetch(`${url}/api/health`).then(r => r.ok, () => false)
    if (ok) return url
    await new Promise(r => setTimeout(r, 200))
  }
  throw new Error('the second server did not start')
}

beforeAll(async () => {
  testDatabase()
  coordinator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id)
}, 60_000)
afterAll(async () => {
  child?.kill('SIGKILL')
  await closeTestDatabase()
})

describe('the server stopped in the middle of a batch', () => {
  it('leaves nothing half-written, and the retry completes the batch', async () => {
    const url = await startSecondServer()
    const device = new Client('10.77.0.1', url)
    await device.signIn(demoUser('enumerator').email)
    const visits = Array.from({ length: 500 }, () => makeVisit(round))
    const ids = visits.map(v => v.id)
    const sequelize = testDatabase()
    // Watch with dirty reads for the batch's rows to appear (written, maybe not committed), then kill the server.
    const dirtyCount = () => sequelize.transaction({ isolationLevel: Transaction.ISOLATION_LEVELS.READ_UNCOMMITTED },
      transaction => Visit.count({ where: { id: ids }, transaction }))
    let seen = 0
    const watcher = (async () => {
      const until = Date.now() + 15_000
      while (Date.now() < until && child?.exitCode === null) {
        seen = await dirtyCount()
        if (seen > 0) break
      }
      child?.kill('SIGKILL')
    })()
    const answer = await device.post<SyncBody>('/api/sync/visits', { visits }).catch(() => null)
    await watcher
    expect(seen).toBeGreaterThan(0)
    await new Promise(r => setTimeout(r, 300))
    const stored = await Visit.count({ where: { id: ids } })
    // All or nothing: a transaction cut short is rolled back by MariaDB when the connection dies.
    expect([0, 500]).toContain(stored)
    if (answer?.status === 200) expect(stored).toBe(500)

    const enumerator = freshClient()
    await enumerator.signIn(demoUser('enumerator').email)
    const retry = await enumerator.post<SyncBody>('/api/sync/visits', { visits })
    expect(retry.status).toBe(200)
    expect(retry.body.counts.stored + retry.body.counts.duplicate).toBe(500)
    expect(await Visit.count({ where: { id: ids } })).toBe(500)
  }, 60_000)
})
