// Builds the app when .output is missing or older than the sources it was built from.
import { createHash } from 'node:crypto'
import { existsSync, readFileSync, readdirSync, statSync, writeFileSync } from 'node:fs'
import path from 'node:path'
import { ROOT, run, say } from './system.mjs'

const SOURCES = ['app', 'server', 'shared', 'public', 'nuxt.config.ts', 'tailwind.config.ts', 'pwa-assets.config.ts', 'package-lock.json', 'scripts/lib/bundle-fit-worker.mjs', 'scripts/lib/page-preloads.mjs']
const STAMP = path.join(ROOT, '.output', '.source-hash')

function* files(entry) {
  const full = path.join(ROOT, entry)
  if (!existsSync(full)) return
  if (statSync(full).isFile()) {
    yield entry
    return
  }
  for (const name of readdirSync(full).sort()) yield* files(path.join(entry, name))
}

export function sourceHash() {
  const hash = createHash('sha256')
  for (const entry of SOURCES) {
    for (const file of files(entry)) {
      hash.update(file)
      hash.update(readFileSync(path.join(ROOT, file)))
    }
  }
  return hash.digest('hex')
}

export function ensureBuild() {
  const wanted = sourceHash()
  const have = existsSync(STAMP) ? readFileSync(STAMP, 'utf8').trim() : ''
  if (have === wanted && existsSync(path.join(ROOT, '.output', 'server', 'index.mjs'))) return false
  say(have ? 'sources changed since the last build: building' : 'building the app (first run)')
  // Thrown, not exited: the caller stops the services it has already started.
  if (run('npx', ['nuxt', 'build']) !== 0) throw new Error('the build failed; see the messages above.')
  writeFileSync(STAMP, wanted)
  return true
}
