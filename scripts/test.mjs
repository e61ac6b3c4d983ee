// `npm test`: the same bootstrap as `npm start` against its own database, then every check in turn:
// lint, typecheck, unit, integration (real MariaDB, real HTTP) and browser tests (Debian's Chromium).
// Every stage runs even when an earlier one fails, and the exit code is non-zero if any failed.
import { existsSync } from 'node:fs'
import path from 'node:path'
import { spawnSync } from 'node:child_process'
import { startStack } from './lib/stack.mjs'
import { DATA, ensureDebianPackage, ensureNodeModules, findExecutable, run, say } from './lib/system.mjs'

ensureNodeModules()
ensureDebianPackage('chromium', () => existsSync('/usr/bin/chromium'), 'the browser tests')
ensureDebianPackage('python3-statsmodels', () => spawnSync('/usr/bin/python3', ['-c', 'import statsmodels'], { stdio: 'ignore' }).status === 0, 'the engine\'s reference comparison')
ensureDebianPackage('mariadb-backup', () => Boolean(findExecutable('mariadb-backup')), 'the backup and restore test')

// R with lme4 (random intercept), survey (survey design) and jsonlite: the outside references the engine tests run.
const rHas = pkg => () => spawnSync('Rscript', ['-e', `suppressPackageStartupMessages(library(${pkg}))`], { stdio: 'ignore' }).status === 0
ensureDebianPackage('r-base-core', () => spawnSync('Rscript', ['--version'], { stdio: 'ignore' }).status === 0, 'the engine\'s R reference comparisons')
ensureDebianPackage('r-cran-lme4', rHas('lme4'), 'the random-intercept reference comparison')
ensureDebianPackage('r-cran-survey', rHas('survey'), 'the survey-design reference comparison')
ensureDebianPackage('r-cran-jsonlite', rHas('jsonlite'), 'the engine\'s R reference comparisons')

const results = []
function stage(name, command, args, env) {
  say(`── ${name}`)
  const started = Date.now()
  const code = run(command, args, env ? { env } : {})
  results.push({ name, ok: code === 0, seconds: (Date.now() - started) / 1000 })
}

stage('lint', 'npx', ['eslint', '.'])
stage('typecheck', 'npx', ['nuxt', 'typecheck'])

const appPort = Number(process.env.FURROWCAST_TEST_PORT ?? 3100)
// The test database is dropped and made anew on every run; its name must start with furrowcast_test.
const database = process.env.FURROWCAST_TEST_DB ?? 'furrowcast_test'
if (!database.startsWith('furrowcast_test')) throw new Error('FURROWCAST_TEST_DB must start with furrowcast_test')
const outbox = path.join(DATA, database, 'outbox')
const stack = await startStack({
  database,
  appPort,
  smtpPort: Number(process.env.FURROWCAST_TEST_SMTP_PORT ?? 2526),
  s3Port: Number(process.env.FURROWCAST_TEST_S3_PORT ?? 4569),
  objectDir: path.join(DATA, database, 'objects'),
  outbox,
  seed: 'demo',
  fresh: true,
  secretFile: 'test-session-secret',
  // Tests pose as several client addresses to exercise the per-IP sign-in limit.
  extraEnv: { FURROWCAST_TRUST_PROXY: '1' }
})

stage('unit, integration and browser tests (vitest)', 'npx', ['vitest', 'run'], {
  ...process.env,
  FURROWCAST_TEST_URL: stack.url,
  DATABASE_URL: stack.env.DATABASE_URL,
  OUTBOX_DIR: outbox,
  S3_ENDPOINT: stack.env.S3_ENDPOINT,
  S3_BUCKET: stack.env.S3_BUCKET,
  NUXT_SESSION_PASSWORD: stack.env.NUXT_SESSION_PASSWORD,
  // The body-limit test reads the server's memory from /proc/<pid>/status.
  FURROWCAST_TEST_SERVER_PID: String(stack.server.pid)
})

await stack.stop()
console.log('\n[furrowcast] summary')
for (const r of results) console.log(`  ${r.ok ? 'ok  ' : 'FAIL'}  ${r.name} (${r.seconds.toFixed(1)} s)`)
process.exit(results.every(r => r.ok) ? 0 : 1)
