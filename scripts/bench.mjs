// `npm run bench`: every benchmark in bench/, one after another; each prints its table and merges its
// entries into bench/results.json. Speed targets live here, never in timed tests.
import { existsSync, readdirSync } from 'node:fs'
import path from 'node:path'
import { ROOT, ensureNodeModules, run, say } from './lib/system.mjs'

ensureNodeModules()
const benches = readdirSync(path.join(ROOT, 'bench')).filter(name => name.endsWith('.bench.ts')).sort()
let failed = 0
for (const name of benches) {
  say(`── bench/${name}`)
  if (run('npx', ['tsx', path.join('bench', name)]) !== 0) failed += 1
}
if (!existsSync(path.join(ROOT, 'bench', 'results.json'))) failed += 1
process.exit(failed ? 1 : 0)
