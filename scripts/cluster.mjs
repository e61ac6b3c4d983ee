// `npm run cluster`: the scale-out layout on this machine's loopback — three MariaDB Galera nodes, two app
// servers, HAProxy in front — with the demo organisation. Ctrl-C stops everything (the nodes last).
import { startCluster } from './lib/cluster-stack.mjs'
import { fail, say } from './lib/system.mjs'

let cluster
const onSignal = async (signal) => {
  say(`${signal}: stopping the cluster…`)
  await cluster?.stop()
  say('stopped cleanly')
  process.exit(signal === 'SIGINT' ? 130 : 143)
}
process.once('SIGINT', onSignal)
process.once('SIGTERM', onSignal)

try {
  cluster = await startCluster({ fresh: process.argv.includes('--fresh') })
}
catch (error) {
  fail(error instanceof Error ? error.message : String(error))
}
const { ports } = cluster
console.log(`
  Furrowcast (cluster) is running at ${cluster.url}  (HAProxy; statistics at http://127.0.0.1:${ports.stats}/)
  app servers: ${ports.apps.map(p => `127.0.0.1:${p}`).join(', ')}; MariaDB through HAProxy on 127.0.0.1:${ports.database}
  Galera nodes (client/gcomm/IST/SST): ${ports.nodes.map(n => `${n.name} ${n.client}/${n.gcomm}/${n.ist}/${n.sst}`).join('; ')}
  Data in .data/galera/. Press Ctrl-C to stop.
`)
