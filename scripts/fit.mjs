// `npm run fit`: runs scripts/fit.ts as one prebuilt ES module (.data/cli/fit.mjs) under plain node, because
// starting tsx (a TypeScript loader that transforms every file on each start) cost seconds per run. The bundle
// is rebuilt with esbuild when any source it is made from is newer than it.
import { existsSync, mkdirSync, readdirSync, renameSync, statSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath, pathToFileURL } from 'node:url'

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..')
const OUT = path.join(ROOT, '.data', 'cli', 'fit.mjs')
const SOURCES = ['scripts/fit.ts', 'scripts/lib/csv-columns.ts', 'server/workers', 'shared/utils/stats']

function newest(entry) {
  const full = path.join(ROOT, entry)
  const st = statSync(full)
  if (st.isFile()) return st.mtimeMs
  return Math.max(0, ...readdirSync(full).map(name => newest(path.join(entry, name))))
}

if (!existsSync(OUT) || statSync(OUT).mtimeMs < Math.max(...SOURCES.map(newest))) {
  mkdirSync(path.dirname(OUT), { recursive: true })
  const { build } = await import('esbuild')
  // Written beside and renamed, so two runs starting together never load half a file.
  const tmp = `${OUT}.${process.pid}.tmp.mjs`
  await build({ entryPoints: [path.join(ROOT, 'scripts/fit.ts')], outfile: tmp, bundle: true, platform: 'node', format: 'esm', target: 'node20', logLevel: 'warning' })
  renameSync(tmp, OUT)
}
await import(pathToFileURL(OUT).href)
