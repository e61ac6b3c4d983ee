/**
 * `npm run cluster:test`: the scale-out layout under faults. Starts a fresh cluster (three Galera nodes, two app
 * servers, HAProxy), then 20 simulated tablets — each a different enumerator — sync 10,000 visits through HAProxy
 * while one Galera node and one app server are killed (SIGKILL) and later brought back.
 * Pass: 0 visits lost, 0 duplicated, every request answered 200 or a retryable 503/429, and afterwards every node
 * holds the same rows (count and a digest of the stored columns, tests/support/table-digest.ts). Prints a summary; exits 1 on any failure.
 */
import { startCluster } from '../../scripts/lib/cluster-stack.mjs'
import { queryNode } from '../../scripts/lib/galera.mjs'
import { storedColumnsSql, tableDigestSql } from '../support/table-digest'

const DEVICES = 20
const VISITS_PER_DEVICE = 500
const BATCH = 25
// Tablets pause between batches, so that the stream lasts long enough to span the faults and the rejoin.
const PAUSE_MS = Number(process.env.FURROWCAST_CLUSTER_TEST_PAUSE_MS ?? 1500)

const started = Date.now()
const at = () => `${((Date.now() - started) / 1000).toFixed(1)} s`
const log = (message: string) => console.log(`[cluster-test ${at()}] ${message}`)
const problems: string[] = []

async function main() {
  process.env.DATABASE_WSREP_SYNC_WAIT = '1'
  const cluster = await startCluster({ fresh: true, database: 'furrowcast_cluster', quiet: true })
  const startedUpAt = at()
  log(`cluster up at ${cluster.url}`)
  try {
    process.env.FURROWCAST_TEST_URL = cluster.url
    const { Client, demoUser, freshClient } = await import('../support/server')
    const { makeRound, makeVisit } = await import('../support/field')
    const { createDatabase } = await import('../../server/db/connection')
    const { Assignment, User } = await import('../../server/db/models')
    const db = createDatabase(cluster.databaseUrl, 2)
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const demoEnumerator = (await User.findOne({ where: { email: demoUser('enumerator').email } }))!
    const round = await makeRound(coordinator, demoEnumerator.id)
    await User.bulkCreate(Array.from({ length: DEVICES }, (_, i) => ({
      organisationId: demoEnumerator.organisationId, email: `cluster-tablet-${i + 1}@bench.furrowcast.invalid`, name: `Cluster tablet ${i + 1}`,
      role: 'enumerator' as const, passwordHash: demoEnumerator.passwordHash, lastSignInAt: null
    })))
    // Ids read back, not inferred: Galera steps auto-increment values by the node count.
    const people = await User.findAll({ where: { email: Array.from({ length: DEVICES }, (_, i) => `cluster-tablet-${i + 1}@bench.furrowcast.invalid`) } })
    await Assignment.bulkCreate(people.map(u => ({ roundId: round.roundId, villageId: round.assignedVillageId, userId: u.id })))
    const tablets = await Promise.all(people.map(async (u, i) => {
      const client = new Client(`10.240.0.${i + 1}`)
      await client.signIn(u.email)
      return client
    }))

    const statuses = new Map<string, number>()
    const tally = (key: string) => statuses.set(key, (statuses.get(key) ?? 0) + 1)
    const sent: string[] = []
    let stored = 0
    const runDevice = async (tablet: InstanceType<typeof Client>) => {
      for (let b = 0; b < VISITS_PER_DEVICE / BATCH; b++) {
        const visits = Array.from({ length: BATCH }, () => makeVisit(round))
        sent.push(...visits.map(v => v.id))
        for (;;) {
          const answer = await tablet.post<{ counts: { stored: number, duplicate: number } }>('/api/sync/visits', { visits }).catch((error: Error) => error)
          if (answer instanceof Error) {
            tally('network error')
            problems.push(`a request got no answer: ${answer.message}`)
            await new Promise(resolve => setTimeout(resolve, 1000))
            continue
          }
          tally(String(answer.status))
          if (answer.status === 200) {
            stored += answer.body.counts.stored
            break
          }
          if (answer.status !== 503 && answer.status !== 429) {
            problems.push(`answer ${answer.status}: ${JSON.stringify(answer.body).slice(0, 200)}`)
            break
          }
          // As the tablet does, after Retry-After (capped here to keep the run short).
          await new Promise(resolve => setTimeout(resolve, Math.min(2, Number(answer.headers.get('retry-after') ?? 2)) * 1000))
        }
        await new Promise(resolve => setTimeout(resolve, PAUSE_MS))
      }
    }
    const streamStarted = Date.now()
    const stream = Promise.all(tablets.map(runDevice))

    const total = DEVICES * VISITS_PER_DEVICE
    while (stored < total * 0.2) await new Promise(resolve => setTimeout(resolve, 100))
    log(`${stored} visits stored: killing Galera node2 and app server 2 (SIGKILL)`)
    cluster.nodes[1].kill('SIGKILL')
    cluster.apps[1].kill('SIGKILL')
    const killedAt = stored
    await new Promise(resolve => setTimeout(resolve, 8000))
    log(`${stored} visits stored: bringing node2 (state transfer) and app server 2 back`)
    const restartedAt = stored
    await Promise.all([cluster.restartNode(1), cluster.startApp(1)])
    const backAt = stored
    log(`${stored} visits stored: node2 Synced again, app server 2 healthy`)
    await stream
    const streamSeconds = (Date.now() - streamStarted) / 1000
    log(`stream done in ${streamSeconds.toFixed(1)} s`)

    // Every visit exactly once (read through HAProxy with causal reads).
    const [row] = await db.query<{ n: number, distinctIds: number }>('SELECT COUNT(*) AS n, COUNT(DISTINCT id) AS distinctIds FROM visits WHERE round_id = ?', { replacements: [round.roundId], type: 'SELECT' as never }) as unknown as Array<{ n: number, distinctIds: number }>
    const ids = new Set(sent)
    const found = (await db.query<{ id: string }>('SELECT id FROM visits WHERE round_id = ?', { replacements: [round.roundId], type: 'SELECT' as never }) as unknown as Array<{ id: string }>).map(r => r.id)
    const lost = [...ids].filter(id => !found.includes(id)).length
    const duplicated = Number(row!.n) - Number(row!.distinctIds)
    const unexpected = found.filter(id => !ids.has(id)).length
    if (ids.size !== total) problems.push(`sent ${ids.size} distinct visits, expected ${total}`)
    if (lost) problems.push(`${lost} visits lost`)
    if (duplicated) problems.push(`${duplicated} visits duplicated`)
    if (unexpected) problems.push(`${unexpected} unexpected rows`)
    await db.close()

    // Every node the same: count and checksum of the visits table, each read after the node caught up.
    const perNode = cluster.ports.nodes.map((node: { name: string }) => {
      const columns = queryNode(node, `${storedColumnsSql('furrowcast_cluster')}`).split('\n').find(line => line.startsWith('visits\t'))!.split('\t')[1]!
      const out = queryNode(node, `SET SESSION wsrep_sync_wait = 1; ${tableDigestSql('furrowcast_cluster', 'visits', columns)};`).split('\t')
      return { node: node.name, rows: Number(out[0]), checksum: out[1]!.trim() }
    })
    if (new Set(perNode.map(n => `${n.rows}:${n.checksum}`)).size !== 1) problems.push(`nodes differ: ${JSON.stringify(perNode)}`)

    const summary = {
      devices: DEVICES,
      visits: total,
      batch: BATCH,
      cluster_start: startedUpAt,
      stream_seconds: Math.round(streamSeconds),
      stored_when_killed: killedAt,
      stored_when_restart_began: restartedAt,
      stored_when_back: backAt,
      answers: Object.fromEntries(statuses),
      lost,
      duplicated,
      nodes: perNode,
      total_seconds: Math.round((Date.now() - started) / 1000),
      result: problems.length ? 'FAIL' : 'PASS'
    }
    console.log(JSON.stringify(summary, null, 2))
    for (const p of problems.slice(0, 20)) console.log(`  problem: ${p}`)
  }
  finally {
    await cluster.stop()
  }
  process.exit(problems.length ? 1 : 0)
}

main().catch((error) => {
  console.error(error)
  process.exit(1)
})
