/**
 * Sync ingest under load: many simulated tablets, each a different enumerator, send visits through the real
 * HTTP route (POST /api/sync/visits) into MariaDB for a fixed time, in batches of 100 — and, as the peer, the
 * same tablets sending one request per visit. Printed side by side: visits/s, request latency p50/p95/p99,
 * and answers by kind (5xx must be 0; 503/429 are retried after Retry-After like the tablet does).
 *
 * Starts its own stack on the bench database. results.json entries: n = devices; ours_ms / peer_ms = ms per
 * 1,000 visits stored (lower is better); ratio = ours_ms / peer_ms; details = the figures above.
 * Run: npx tsx bench/sync.bench.ts
 * Settings: FURROWCAST_BENCH_PORT, FURROWCAST_BENCH_SMTP_PORT, FURROWCAST_BENCH_S3_PORT,
 *   FURROWCAST_BENCH_SYNC_SECONDS (60, each batched run), FURROWCAST_BENCH_SYNC_PEER_SECONDS (20, each peer run),
 *   FURROWCAST_BENCH_SYNC_DEVICES (50,200), FURROWCAST_BENCH_SYNC_OFFERED (3000 visits/s for the paced run).
 *
 * Two ways of loading the server, both printed: flat out (every device sends its next batch the moment the last one
 * is answered: the most the server can take, where latency is by Little's law devices × batch / throughput, 1.7 s
 * at 50 devices and 3,000 visits/s) and paced (each device sends a batch on its own clock, spread over the interval,
 * so that all together offer FURROWCAST_BENCH_SYNC_OFFERED visits/s, as tablets that sync on their own schedules
 * do; a device whose answer comes late sends its next batch at once). The paced run shows the latency an enumerator
 * sees at that load; the flat-out run the capacity.
 */
import { readFileSync } from 'node:fs'
import { loadavg } from 'node:os'
import { join } from 'node:path'
import { runningMariadbPid } from '../scripts/lib/mariadb.mjs'
import { startStack } from '../scripts/lib/stack.mjs'
import { DATA } from '../scripts/lib/system.mjs'
import { type BenchEntry, mergeResults, printTable, round } from './lib/results-file'

const BATCH = 100
const SECONDS = Number(process.env.FURROWCAST_BENCH_SYNC_SECONDS ?? 60)
const PEER_SECONDS = Number(process.env.FURROWCAST_BENCH_SYNC_PEER_SECONDS ?? 20)
const DEVICES = (process.env.FURROWCAST_BENCH_SYNC_DEVICES ?? '50,200').split(',').map(Number)
const OFFERED = Number(process.env.FURROWCAST_BENCH_SYNC_OFFERED ?? 3000)

interface Run { devices: number, batch: number, seconds: number, stored: number, latencies: number[], byStatus: Map<number, number>, networkErrors: number, cpu: { app: number, database: number, client: number } }

function peakRssMb(pid: number): number {
  const kb = Number(/VmHWM:\s+(\d+)/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'))?.[1] ?? 0)
  return kb / 1024
}

/** CPU seconds (user + system) a process has used so far, from /proc. */
function cpuSeconds(pid: number | null): number {
  if (!pid) return NaN
  const fields = readFileSync(`/proc/${pid}/stat`, 'utf8').split(') ')[1]!.split(' ')
  return (Number(fields[11]) + Number(fields[12])) / 100
}

const percentile = (sorted: number[], p: number) => sorted.length ? sorted[Math.min(sorted.length - 1, Math.floor(p * sorted.length))]! : NaN

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
    process.env.DATABASE_URL = stack.env.DATABASE_URL
    // Imported after the URLs are known: the clients and the database handle read them.
    const { Client, demoUser, freshClient } = await import('../tests/support/server')
    const { makeRound, makeVisit } = await import('../tests/support/field')
    const { createDatabase } = await import('../server/db/connection')
    const { Assignment, User } = await import('../server/db/models')
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const setupDb = createDatabase(stack.env.DATABASE_URL, 2)
    const demoEnumerator = (await User.findOne({ where: { email: demoUser('enumerator').email } }))!
    const testRound = await makeRound(coordinator, demoEnumerator.id)

    // One enumerator per tablet (the per-person limit would otherwise hold them back), all assigned to the
    // round's village, with the demo password; made directly in the bench database to save invitations.
    const maxDevices = Math.max(...DEVICES)
    const people = await User.bulkCreate(Array.from({ length: maxDevices }, (_, i) => ({
      organisationId: demoEnumerator.organisationId,
      email: `tablet-${i + 1}@bench.furrowcast.invalid`,
      name: `Bench tablet ${i + 1}`,
      role: 'enumerator' as const,
      passwordHash: demoEnumerator.passwordHash,
      lastSignInAt: null
    })))
    const saved = await User.findAll({ where: { email: people.map(p => p.email) }, order: [['id', 'ASC']] })
    await Assignment.bulkCreate(saved.map(u => ({ roundId: testRound.roundId, villageId: testRound.assignedVillageId, userId: u.id })))
    await setupDb.close()
    const tablets: InstanceType<typeof Client>[] = []
    for (let i = 0; i < saved.length; i += 10) {
      const group = saved.slice(i, i + 10).map((u, j) => {
        const client = new Client(`10.250.${Math.floor((i + j) / 250)}.${1 + ((i + j) % 250)}`)
        tablets.push(client)
        return client.signIn(u.email)
      })
      await Promise.all(group)
    }

    /** intervalMs: paced, each device sends a batch every intervalMs from a random phase; absent: flat out. */
    async function run(devices: number, batch: number, seconds: number, intervalMs?: number): Promise<Run> {
      const result: Run = { devices, batch, seconds, stored: 0, latencies: [], byStatus: new Map(), networkErrors: 0, cpu: { app: 0, database: 0, client: 0 } }
      const cpuBefore = { app: cpuSeconds(stack.server.pid!), database: cpuSeconds(runningMariadbPid()), client: process.cpuUsage() }
      const until = Date.now() + seconds * 1000
      await Promise.all(tablets.slice(0, devices).map(async (tablet) => {
        let visits = Array.from({ length: batch }, () => makeVisit(testRound))
        let next = Date.now() + (intervalMs ? Math.random() * intervalMs : 0)
        while (Date.now() < until) {
          if (intervalMs) {
            if (next > Date.now()) await new Promise(resolve => setTimeout(resolve, next - Date.now()))
            if (Date.now() >= until) break
            next = Math.max(next + intervalMs, Date.now())
          }
          const t0 = performance.now()
          const answer = await tablet.post<{ counts?: { stored: number, duplicate: number } }>('/api/sync/visits', { visits }).catch(() => null)
          result.latencies.push(performance.now() - t0)
          if (!answer) {
            result.networkErrors++
            continue
          }
          result.byStatus.set(answer.status, (result.byStatus.get(answer.status) ?? 0) + 1)
          if (answer.status === 200) {
            result.stored += answer.body.counts!.stored
            visits = Array.from({ length: batch }, () => makeVisit(testRound))
          }
          else if (answer.status === 503 || answer.status === 429) {
            // As the tablet does: wait the server's Retry-After, then send the same batch again.
            await new Promise(resolve => setTimeout(resolve, Number(answer.headers.get('retry-after') ?? 5) * 1000))
          }
          else {
            visits = Array.from({ length: batch }, () => makeVisit(testRound))
          }
        }
      }))
      result.latencies.sort((a, b) => a - b)
      const client = process.cpuUsage(cpuBefore.client)
      result.cpu = { app: cpuSeconds(stack.server.pid!) - cpuBefore.app, database: cpuSeconds(runningMariadbPid()) - cpuBefore.database, client: (client.user + client.system) / 1e6 }
      return result
    }

    // Warm up (JIT, pools, caches) before timing.
    await run(Math.min(10, maxDevices), BATCH, 3)
    const entries: BenchEntry[] = []
    const rows: string[][] = []
    const describe = (r: Run) => {
      const count = (test: (s: number) => boolean) => [...r.byStatus].filter(([s]) => test(s)).reduce((a, [, n]) => a + n, 0)
      return {
        visitsPerS: r.stored / r.seconds,
        p50: percentile(r.latencies, 0.5),
        p95: percentile(r.latencies, 0.95),
        p99: percentile(r.latencies, 0.99),
        requests: r.latencies.length,
        s5xx: count(s => s >= 500) + r.networkErrors,
        s503: count(s => s === 503),
        s429: count(s => s === 429),
        // CPU seconds the app server and MariaDB spent per 1,000 visits stored: what the work costs whatever else
        // the machine is doing, and hence the ceiling on 2 otherwise idle cores (2 / cost × 1,000 visits/s).
        appCpuPer1000: r.cpu.app / r.stored * 1000,
        dbCpuPer1000: r.cpu.database / r.stored * 1000,
        clientCpuPer1000: r.cpu.client / r.stored * 1000
      }
    }
    for (const devices of DEVICES) {
      const ours = describe(await run(devices, BATCH, SECONDS))
      const paced = describe(await run(devices, BATCH, SECONDS, devices * BATCH / OFFERED * 1000))
      const peer = describe(await run(devices, 1, PEER_SECONDS))
      for (const [label, d] of [[`${devices} devices, batches of ${BATCH}, flat out`, ours], [`${devices} devices, batches of ${BATCH}, paced at ${OFFERED}/s offered`, paced], [`${devices} devices, one request per visit`, peer]] as const) {
        const ceiling = 2 / ((d.appCpuPer1000 + d.dbCpuPer1000) / 1000)
        rows.push([label, String(Math.round(d.visitsPerS)), d.p50.toFixed(0), d.p95.toFixed(0), d.p99.toFixed(0), String(d.requests), String(d.s5xx), String(d.s503), String(d.s429),
          `${d.appCpuPer1000.toFixed(2)} + ${d.dbCpuPer1000.toFixed(2)}`, String(Math.round(ceiling))])
      }
      entries.push({
        name: `sync ingest, ms per 1,000 visits (batches of ${BATCH}, concurrent devices)`,
        n: devices,
        ours_ms: round(1e6 / ours.visitsPerS),
        peer: 'one request per visit',
        peer_ms: round(1e6 / peer.visitsPerS),
        ratio: round(peer.visitsPerS / ours.visitsPerS, 4),
        peak_rss_mb: round(peakRssMb(stack.server.pid!)),
        details: {
          seconds: SECONDS,
          visits_per_s: Math.round(ours.visitsPerS),
          p50_ms: round(ours.p50),
          p95_ms: round(ours.p95),
          p99_ms: round(ours.p99),
          requests: ours.requests,
          answers_5xx: ours.s5xx,
          answers_503: ours.s503,
          answers_429: ours.s429,
          app_cpu_s_per_1000: round(ours.appCpuPer1000, 3),
          db_cpu_s_per_1000: round(ours.dbCpuPer1000, 3),
          ceiling_visits_per_s: Math.round(2000 / (ours.appCpuPer1000 + ours.dbCpuPer1000)),
          load_average: round(loadavg()[0]!, 1),
          paced_offered_visits_per_s: OFFERED,
          paced_visits_per_s: Math.round(paced.visitsPerS),
          paced_p50_ms: round(paced.p50),
          paced_p95_ms: round(paced.p95),
          paced_p99_ms: round(paced.p99),
          paced_answers_5xx: paced.s5xx,
          peer_seconds: PEER_SECONDS,
          peer_visits_per_s: Math.round(peer.visitsPerS),
          peer_p50_ms: round(peer.p50),
          peer_p95_ms: round(peer.p95),
          peer_p99_ms: round(peer.p99),
          peer_answers_5xx: peer.s5xx
        }
      })
    }
    console.log(`sync ingest through HTTP into MariaDB, each tablet a different enumerator, ${SECONDS} s per batched run, ${PEER_SECONDS} s per one-by-one run:`)
    printTable(['run', 'visits/s', 'p50 ms', 'p95 ms', 'p99 ms', 'requests', '5xx', '503', '429', 'CPU s/1,000 (app + db)', 'ceiling/s'], rows)
    console.log(`ceiling: visits/s if the app server and MariaDB had both cores to themselves (load average now ${loadavg()[0]!.toFixed(1)})`)
    console.log('targets: 0 answers 5xx (503 included); p95 under 1,000 ms at 50 devices; at least 3,000 visits/s')
    console.log(`flat out, the latency is devices × ${BATCH} / visits/s by Little's law; paced, it is what a tablet waits at the offered load`)
    mergeResults(entries)
  }
  finally {
    await stack.stop()
  }
}

main().catch((error) => {
  console.error(error)
  process.exit(1)
})
