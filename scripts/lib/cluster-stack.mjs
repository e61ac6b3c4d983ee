// Starts the whole scale-out layout on loopback: three Galera nodes, two app servers on the same database
// through HAProxy's MariaDB listener, and HAProxy's HTTP front with health checks on /api/health.
// Used by `npm run cluster` and by the cluster fault test, which kills and restarts pieces through the handles.
import { rmSync, writeFileSync } from 'node:fs'
import path from 'node:path'
import { ensureBuild } from './build.mjs'
import { CLUSTER_DIR, clusterPorts, ensureClusterPackages, haproxyConfig, prepareClusterDatabase, resetCluster, startNode } from './galera.mjs'
import { sessionSecret } from './session-secret.mjs'
import { ROOT, canConnect, ensureNodeModules, findExecutable, requireFreePort, say, startChild, waitFor } from './system.mjs'

export async function startCluster({ fresh = false, database = 'furrowcast_cluster', seed = 'demo', quiet = false } = {}) {
  // Quiet children write nowhere (an unread pipe would fill up and block them).
  const output = quiet ? { quiet, stdio: 'ignore' } : {}
  ensureNodeModules()
  ensureClusterPackages()
  const ports = clusterPorts()
  for (const port of [ports.front, ports.stats, ports.database, ports.smtp, ports.s3, ...ports.apps, ...ports.nodes.flatMap(n => [n.client, n.gcomm, n.ist, n.sst])]) {
    await requireFreePort(port, 'the cluster', 'FURROWCAST_CLUSTER_PORT_BASE')
  }
  if (fresh) resetCluster()
  const nodes = new Array(3)
  const apps = new Array(2)
  const services = []
  let stopping
  const stop = () => {
    stopping ??= (async () => {
      for (const s of [...services].reverse()) await s.stopGracefully().catch(() => {})
      for (const a of apps) await a?.stopGracefully().catch(() => {})
      // Nodes last and one at a time, node1 last: it is then the one that may bootstrap the next start.
      for (const n of [...nodes].reverse()) await n?.stopGracefully(120_000).catch(() => {})
    })()
    return stopping
  }
  try {
    say('starting Galera node1 (bootstraps the cluster)')
    nodes[0] = await startNode(ports.nodes[0], ports, { bootstrap: true })
    const databaseUrl = prepareClusterDatabase(ports.nodes[0], database, ports.database)
    for (const i of [1, 2]) {
      say(`starting Galera ${ports.nodes[i].name} (joins by state transfer)`)
      nodes[i] = await startNode(ports.nodes[i], ports)
    }

    const haproxyCfg = path.join(CLUSTER_DIR, 'haproxy.cfg')
    writeFileSync(haproxyCfg, haproxyConfig(ports))
    const haproxy = startChild('haproxy', findExecutable('haproxy'), ['-f', haproxyCfg, '-db'], output)
    services.push(haproxy)
    await waitFor(() => canConnect(ports.front), 'HAProxy', 15_000)

    const outbox = path.join(CLUSTER_DIR, 'outbox')
    const objects = path.join(CLUSTER_DIR, 'objects')
    if (fresh) rmSync(outbox, { recursive: true, force: true })
    const catcher = startChild('mail', process.execPath, [path.join(ROOT, 'scripts/services/mail-catcher.mjs'), String(ports.smtp), outbox], output)
    const store = startChild('s3', process.execPath, [path.join(ROOT, 'scripts/services/object-store.mjs'), String(ports.s3), objects, 'furrowcast-photos'], output)
    services.unshift(catcher, store)
    await waitFor(async () => await canConnect(ports.smtp) && await canConnect(ports.s3), 'the mail catcher and object store', 15_000)

    ensureBuild()
    const env = port => ({
      ...process.env,
      NODE_ENV: 'production',
      HOST: '127.0.0.1',
      PORT: String(port),
      DATABASE_URL: databaseUrl,
      // Reads wait for writes committed on any node (a session checked right after sign-in, say).
      DATABASE_WSREP_SYNC_WAIT: '1',
      SMTP_URL: `smtp://127.0.0.1:${ports.smtp}`,
      OUTBOX_DIR: outbox,
      S3_ENDPOINT: `http://127.0.0.1:${ports.s3}`,
      S3_BUCKET: 'furrowcast-photos',
      PUBLIC_URL: `http://127.0.0.1:${ports.front}`,
      NUXT_SESSION_PASSWORD: sessionSecret('cluster-session-secret'),
      FURROWCAST_SEED: seed,
      // HAProxy adds X-Forwarded-For.
      FURROWCAST_TRUST_PROXY: '1'
    })
    const startApp = async (i) => {
      apps[i] = startChild(`app${i + 1}`, process.execPath, [path.join(ROOT, '.output/server/index.mjs')], { env: env(ports.apps[i]), ...output })
      await waitFor(async () => {
        const answer = await fetch(`http://127.0.0.1:${ports.apps[i]}/api/health`).catch(() => null)
        return answer?.ok === true
      }, `app server ${i + 1}`, 120_000)
      return apps[i]
    }
    await Promise.all([startApp(0), startApp(1)])
    await waitFor(async () => (await fetch(`http://127.0.0.1:${ports.front}/api/health`).catch(() => null))?.ok === true, 'HAProxy front', 15_000)
    return {
      ports,
      databaseUrl,
      url: `http://127.0.0.1:${ports.front}`,
      nodes,
      apps,
      startApp,
      restartNode: async (i) => {
        nodes[i] = await startNode(ports.nodes[i], ports)
        return nodes[i]
      },
      stop
    }
  }
  catch (error) {
    await stop()
    throw error
  }
}
