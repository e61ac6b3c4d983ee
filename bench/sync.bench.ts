/**
 * Sync ingest benchmark: visits per second through the real HTTP route (POST /api/sync/visits) into MariaDB,
 * in batches of 500, against the same number of visits sent one request per visit (the peer).
 *
 * Starts its own stack (MariaDB, fake S3, mail catcher, the built server) on the bench database, makes a round
 * through the coordinator's routes, then times each way over fresh visits. peak_rss_mb is the app server's.
 * ratio = ours_ms / peer_ms (below 1: batches are faster; 0.05 means 20×).
 * Run: npx tsx bench/sync.bench.ts   (ports: FURROWCAST_BENCH_PORT, FURROWCAST_BENCH_SMTP_PORT, FURROWCAST_BENCH_S3_PORT)
 */
import { existsSync, readFileSync, writeFileSync } from 'node:fs'
import { dirname, join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { startStack } from '../scripts/lib/stack.mjs'
import { DATA } from '../scripts/lib/system.mjs'

const here = dirname(fileURLToPath(import.meta.url))
const N = 3000
const BATCH = 500

interface Entry { name: string, n: number, ours_ms: number, peer: string, peer_ms: number | null, ratio: number | null, peak_rss_mb: number }

const round = (v: number, d = 1) => Math.round(v * 10 ** d) / 10 ** d

function peakRssMb(pid: number): number {
  const status = readFileSync(`/proc/${pid}/status`, 'utf8')
  const kb = Number(/VmHWM:\s+(\d+)/.exec(status)?.[1] ?? 0)
  return kb / 1024
}

async function main() {
  const stack = await startStack({
    database: 'furrowcast_bench',
    appPort: Number(process.env.FURROWCAST_BENCH_PORT ?? 3200),
    smtpPort: Number(process.env.FURROWCAST_BENCH_SMTP_PORT ?? 2527),
    s3Port: Number(process.env.FURROWCAST_BENCH_S3_PORT ?? 4570),
    objectDir: join(DATA, 'furrowcast_bench', 'objects'),
    outbox: join(DATA, 'furrowcast_bench', 'outbox'),
    seed: 'demo',
    fresh: true,
    secretFile: 'bench-session-secret',
    extraEnv: { FURROWCAST_TRUST_PROXY: '1' }
  })
  try {
    process.env.FURROWCAST_TEST_URL = stack.url
    // Imported after the URL is known: the test clients read it.
    const { demoUser, freshClient } = await import('../tests/support/server')
    const { makeRound, makeVisit } = await import('../tests/support/field')
    const coordinator = freshClient()
    const enumerator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    await enumerator.signIn(demoUser('enumerator').email)
    const me = await enumerator.get<{ id: number }>('/api/me')
    const testRound = await makeRound(coordinator, me.body.id)
    const send = async (visits: unknown[]) => {
      const answer = await enumerator.post<{ counts: { stored: number } }>('/api/sync/visits', { visits })
      if (answer.status !== 200 || answer.body.counts.stored !== visits.length) throw new Error(`sync failed: ${answer.status} ${JSON.stringify(answer.body).slice(0, 300)}`)
    }
    // Warm up both paths (JIT, pool, caches) before timing.
    for (let i = 0; i < 2; i++) await send(Array.from({ length: BATCH }, () => makeVisit(testRound)))
    for (let i = 0; i < 100; i++) await send([makeVisit(testRound)])

    const batched = Array.from({ length: N }, () => makeVisit(testRound))
    const t0 = performance.now()
    for (let i = 0; i < N; i += BATCH) await send(batched.slice(i, i + BATCH))
    const oursMs = performance.now() - t0

    const single = Array.from({ length: N }, () => makeVisit(testRound))
    const t1 = performance.now()
    for (const visit of single) await send([visit])
    const peerMs = performance.now() - t1

    const rss = peakRssMb(stack.server.pid!)
    const entry: Entry = {
      name: `sync ingest (batches of ${BATCH})`,
      n: N,
      ours_ms: round(oursMs),
      peer: 'one request per visit',
      peer_ms: round(peerMs),
      ratio: round(oursMs / peerMs, 4),
      peak_rss_mb: round(rss)
    }
    console.log(`sync ingest, ${N} visits through HTTP into MariaDB:`)
    console.log(`  batches of ${BATCH}:       ${oursMs.toFixed(0)} ms  →  ${Math.round(N / (oursMs / 1000))} visits/s`)
    console.log(`  one request per visit: ${peerMs.toFixed(0)} ms  →  ${Math.round(N / (peerMs / 1000))} visits/s`)
    console.log(`  batches are ${(peerMs / oursMs).toFixed(1)}× faster; app server peak RSS ${rss.toFixed(0)} MB`)

    const resultsPath = join(here, 'results.json')
    let existing: Entry[] = []
    if (existsSync(resultsPath)) {
      try {
        existing = JSON.parse(readFileSync(resultsPath, 'utf8')) as Entry[]
      }
      catch {
        existing = []
      }
    }
    const key = (e: { name: string, n: number }): string => `${e.name}@${e.n}`
    const merged = [...existing.filter(e => key(e) !== key(entry)), entry]
    writeFileSync(resultsPath, `${JSON.stringify(merged, null, 2)}\n`)
    console.log('results written to bench/results.json (1 entry updated)')
  }
  finally {
    await stack.stop()
  }
}

main().catch((error) => {
  console.error(error)
  process.exit(1)
})
