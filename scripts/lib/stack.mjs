// Brings up what the app needs on loopback (database, mail catcher, object store), then the built server.
// Used by both `npm start` and `npm test`, each with its own database, ports and outbox.
import { rmSync } from 'node:fs'
import path from 'node:path'
import { ensureBuild } from './build.mjs'
import { prepareDatabase, startMariadb } from './mariadb.mjs'
import { sessionSecret } from './session-secret.mjs'
import { DATA, ROOT, canConnect, ensureNodeModules, fail, requireFreePort, say, startChild, waitFor } from './system.mjs'

/**
 * Starts everything in order. Ctrl-C (SIGINT) or SIGTERM at any moment, during start-up or later, stops
 * what was started in reverse order (the database last, after it has flushed) and exits with `exitCode`.
 */
export async function startStack({ database, appPort, smtpPort, s3Port, objectDir, outbox, seed, fresh, secretFile, extraEnv = {} }) {
  const stoppers = []
  let stopping
  const stop = () => {
    stopping ??= (async () => {
      for (const stopOne of stoppers.reverse()) await stopOne().catch(error => console.error(error))
      stoppers.length = 0
    })()
    return stopping
  }
  const onSignal = async (signal) => {
    say(`${signal}: stopping…`)
    await stop()
    say('stopped cleanly')
    process.exit(signal === 'SIGINT' ? 130 : 143)
  }
  process.once('SIGINT', onSignal)
  process.once('SIGTERM', onSignal)
  try {
    ensureNodeModules()
    await requireFreePort(appPort, 'Furrowcast', 'PORT')

    let databaseUrl = process.env.DATABASE_URL
    if (!databaseUrl) {
      const dbPort = Number(process.env.FURROWCAST_DB_PORT ?? 3407)
      const mariadb = await startMariadb(dbPort)
      stoppers.push(mariadb.stop)
      databaseUrl = prepareDatabase(database, dbPort, { fresh })
    }

    let smtpUrl = process.env.SMTP_URL
    if (!smtpUrl) {
      await requireFreePort(smtpPort, 'the local mail catcher', 'FURROWCAST_SMTP_PORT')
      if (fresh) rmSync(outbox, { recursive: true, force: true })
      const catcher = startChild('mail', process.execPath, [path.join(ROOT, 'scripts/services/mail-catcher.mjs'), String(smtpPort), outbox])
      stoppers.push(() => catcher.stopGracefully())
      await waitFor(() => canConnect(smtpPort), 'the mail catcher', 15_000)
      smtpUrl = `smtp://127.0.0.1:${smtpPort}`
    }

    let s3Endpoint = process.env.S3_ENDPOINT
    const s3Bucket = process.env.S3_BUCKET ?? 'furrowcast-photos'
    if (!s3Endpoint) {
      await requireFreePort(s3Port, 'the local object store', 'FURROWCAST_S3_PORT / FURROWCAST_TEST_S3_PORT')
      if (fresh) rmSync(objectDir, { recursive: true, force: true })
      const store = startChild('s3', process.execPath, [path.join(ROOT, 'scripts/services/object-store.mjs'), String(s3Port), objectDir, s3Bucket])
      stoppers.push(() => store.stopGracefully())
      await waitFor(() => canConnect(s3Port), 'the object store', 15_000)
      s3Endpoint = `http://127.0.0.1:${s3Port}`
    }

    ensureBuild()

    const env = {
      ...process.env,
      NODE_ENV: 'production',
      HOST: '127.0.0.1',
      PORT: String(appPort),
      DATABASE_URL: databaseUrl,
      SMTP_URL: smtpUrl,
      OUTBOX_DIR: outbox,
      S3_ENDPOINT: s3Endpoint,
      S3_BUCKET: s3Bucket,
      PUBLIC_URL: process.env.PUBLIC_URL ?? `http://127.0.0.1:${appPort}`,
      NUXT_SESSION_PASSWORD: sessionSecret(secretFile),
      FURROWCAST_SEED: seed,
      // glibc's malloc: blocks of 1 MB or more mapped on their own and unmapped when freed. By default it raises that
      // threshold after the first large free, and a fit's column buffers (8 MB each at 10^6 rows), freed in the fit
      // worker, then stayed in the loader's heap arena while the worker mapped new memory for its own arrays.
      MALLOC_MMAP_THRESHOLD_: process.env.MALLOC_MMAP_THRESHOLD_ ?? '1048576',
      ...extraEnv
    }
    const server = startChild('app', process.execPath, [path.join(ROOT, '.output/server/index.mjs')], { env })
    stoppers.push(() => server.stopGracefully())
    await waitFor(async () => {
      if (server.exitCode !== null) throw new Error('the app server exited during start-up; see the messages above')
      const answer = await fetch(`http://127.0.0.1:${appPort}/api/health`).catch(() => null)
      return answer?.ok === true
    }, 'the app server', 90_000)
    return { url: `http://127.0.0.1:${appPort}`, env, server, stop, isStopping: () => stopping !== undefined }
  }
  catch (error) {
    await stop()
    fail(error instanceof Error ? error.message : String(error))
  }
}

export { DATA }
