// The fit worker as one self-contained ES module. Used by the build (nuxt.config.ts) and by the tests,
// so both run exactly the same bundle.
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { build } from 'esbuild'

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..')

export async function bundleFitWorker(outfile) {
  await build({
    entryPoints: [path.join(ROOT, 'server/workers/fit.worker.ts')],
    outfile,
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    logLevel: 'warning'
  })
  return outfile
}
