/**
 * App fit path benchmark: rounds of 1e5 and 1e6 accepted visits (10 numeric answers, 500 villages), seeded here
 * directly in SQL (INSERT … SELECT over MariaDB's sequence engine: seconds, not the hours the HTTP route would take).
 *
 * Ours: POST /api/models (probit, cluster SEs by village, AME) → GET /api/models/:id until the results are readable.
 * Peer, in the same run on the same rows: the analyst's route — the `mariadb` command-line client (--batch, one
 * JSON_VALUE per answer) piped into pandas.read_csv, then statsmodels Probit with cluster SEs and get_margeff().
 * Also printed: the POST's answer time, a GET's answer time after the fit, and the server's peak RSS against the
 * size of the design matrix. ratio = ours_ms / peer_ms.
 * Run: npx tsx bench/app-fit.bench.ts  (sizes: FURROWCAST_BENCH_APP_FIT_SIZES, default 1e5,1e6; ports: FURROWCAST_BENCH_PORT, FURROWCAST_BENCH_SMTP_PORT, FURROWCAST_BENCH_S3_PORT)
 */
import { spawn } from 'node:child_process'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { QueryTypes } from 'sequelize'
import { rootSql } from '../scripts/lib/mariadb.mjs'
import { startStack } from '../scripts/lib/stack.mjs'
import { DATA, findExecutable } from '../scripts/lib/system.mjs'
import { RUN_WAIT_MAX_MS } from '../shared/utils/modelling/request'
import { loadAverage, mergeResults, printTable, round, type BenchEntry } from './lib/results-file'

const SIZES = (process.env.FURROWCAST_BENCH_APP_FIT_SIZES ?? '1e5,1e6').split(',').map(Number)
const K = 10
const VILLAGES = 500
const PYTHON = '/usr/bin/python3'
const DB = 'furrowcast_bench'

function rssMb(pid: number, field: 'VmHWM' | 'VmRSS'): number {
  const status = readFileSync(`/proc/${pid}/status`, 'utf8')
  return Number(new RegExp(`${field}:\\s+(\\d+)`).exec(status)?.[1] ?? 0) / 1024
}

/** Runs a shell pipeline and returns its stdout (the peer's JSON line). */
function sh(command: string, env: NodeJS.ProcessEnv = {}): Promise<string> {
  return new Promise((resolve, reject) => {
    const child = spawn('/bin/sh', ['-c', command], { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] })
    let out = ''
    let err = ''
    child.stdout.on('data', (d) => {
      out += d
    })
    child.stderr.on('data', (d) => {
      err += d
    })
    child.on('close', code => (code === 0 ? resolve(out) : reject(new Error(`${command.slice(0, 80)}… failed (${code}): ${err.slice(-500)}`))))
  })
}

const PEER = `
import io, json, sys, time
import pandas as pd
import statsmodels
import statsmodels.api as sm
t0 = float(sys.argv[1])
df = pd.read_csv(sys.stdin, sep="\\t")
t1 = time.time()
X = sm.add_constant(df[[f"x{j}" for j in range(1, ${K + 1})]].to_numpy(dtype=float))
res = sm.Probit(df["adopted"].to_numpy(dtype=float), X).fit(method="newton", disp=0, cov_type="cluster", cov_kwds={"groups": df["village"].to_numpy()})
m = res.get_margeff()
_ = (m.margeff, m.margeff_se)
t2 = time.time()
print(json.dumps({"total_ms": (t2 - t0) * 1000, "read_ms": (t1 - t0) * 1000, "fit_ms": (t2 - t1) * 1000, "rows": len(df), "version": statsmodels.__version__, "coef": [float(v) for v in res.params]}))
`

/**
 * Waits until InnoDB has finished the seed's background work (dirty pages written out, old row versions purged), so
 * that neither side of the comparison pays for it: whichever ran first after seeding 10^6 rows read through the
 * flushing. Called before each side.
 */
async function settle() {
  const status = (name: string) => Number(/\t(\d+)/.exec(rootSql(`SHOW GLOBAL STATUS LIKE '${name}'`))?.[1] ?? 0)
  const historyLength = () => Number(rootSql('SELECT COUNT FROM information_schema.INNODB_METRICS WHERE NAME = \'trx_rseg_history_len\'').trim() || 0)
  const before = rootSql('SELECT @@GLOBAL.innodb_max_dirty_pages_pct').trim()
  rootSql('SET GLOBAL innodb_max_dirty_pages_pct = 0')
  try {
    const until = Date.now() + 180_000
    while (Date.now() < until && (status('Innodb_buffer_pool_pages_dirty') > 100 || historyLength() > 1000)) {
      await new Promise(resolve => setTimeout(resolve, 500))
    }
  }
  finally {
    rootSql(`SET GLOBAL innodb_max_dirty_pages_pct = ${Number(before)}`)
  }
}

async function main() {
  const stack = await startStack({
    database: DB,
    appPort: Number(process.env.FURROWCAST_BENCH_PORT ?? 3200),
    smtpPort: Number(process.env.FURROWCAST_BENCH_SMTP_PORT ?? 2527),
    s3Port: Number(process.env.FURROWCAST_BENCH_S3_PORT ?? 4570),
    objectDir: join(DATA, DB, 'objects'),
    outbox: join(DATA, DB, 'outbox'),
    seed: 'demo',
    fresh: true,
    secretFile: 'bench-session-secret',
    extraEnv: { FURROWCAST_TRUST_PROXY: '1' }
  })
  try {
    process.env.FURROWCAST_TEST_URL = stack.url
    const { demoUser, freshClient } = await import('../tests/support/server')
    const { createDatabase } = await import('../server/db/connection')
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const me = await coordinator.get<{ id: number, organisationId: number }>('/api/me')
    // No socket timeout: seeding 10^6 rows is one long statement.
    const db = createDatabase(stack.env.DATABASE_URL, 2, { timeouts: false })
    // Typed queries: sequelize's raw-query path cannot strip the mariadb connector's result metadata.
    const select = <T extends object>(sql: string, replacements: unknown[] = []) => db.query<T>(sql, { replacements, type: QueryTypes.SELECT })
    const exec = (sql: string, replacements: unknown[] = []) => db.query(sql, { replacements, type: QueryTypes.UPDATE })
    const [org] = await select<{ id: number }>('SELECT organisation_id AS id FROM users WHERE id = ?', [me.body.id]) as [{ id: number }]
    const client = findExecutable('mariadb') ?? findExecutable('mysql')
    const url = new URL(stack.env.DATABASE_URL)
    const entries: BenchEntry[] = []
    const rows: string[][] = []

    for (const n of SIZES) {
      // A round with ten numeric questions, made through the routes; villages and visits in SQL.
      const made = await coordinator.post<{ id: number }>('/api/rounds', { name: `Bench round ${n}`, technology: 'bench seed', season: '2026' })
      const roundId = made.body.id
      await coordinator.request('PUT', `/api/rounds/${roundId}/questionnaire`, { questions: Array.from({ length: K }, (_, j) => ({ key: `x${j + 1}`, label: `Measure ${j + 1}`, type: 'number', min: -100, max: 100, required: true })) })
      const tag = `B${n}`
      await exec(`INSERT INTO villages (organisation_id, code, name, district, centre_lat, centre_lon, created_at, updated_at)
        SELECT ?, CONCAT(?, '-', seq), CONCAT('Bench village ', seq), 'Bench district', -13 + seq / 1000, 31.5, NOW(), NOW() FROM seq_1_to_${VILLAGES}`, [org.id, tag])
      const villages = await select<{ id: number }>('SELECT id FROM villages WHERE organisation_id = ? AND code LIKE ? ORDER BY id', [org.id, `${tag}-%`])
      // One INSERT … SELECT takes consecutive auto-increment ids, so a visit's village is first id + seq mod 500
      // (no join on the code, which made MariaDB compare every visit with every village).
      const firstVillage = villages[0]!.id
      if (villages.at(-1)!.id - firstVillage !== VILLAGES - 1) throw new Error('the bench villages did not get consecutive ids')
      await coordinator.request('PUT', `/api/rounds/${roundId}/villages`, { villageIds: villages.map(v => v.id) })
      await coordinator.request('PUT', `/api/rounds/${roundId}/assignments`, { assignments: [{ userId: me.body.id, villageId: villages[0]!.id }] })
      await coordinator.request('PATCH', `/api/rounds/${roundId}`, { status: 'open' })
      const detail = await coordinator.get<{ questionnaire: { id: number } }>(`/api/rounds/${roundId}`)
      const versionId = detail.body.questionnaire.id
      // x_j ~ N(0,1) and the noise e by Box–Muller from RAND(), a village effect u (seeded by the village, so one per
      // village), y from a probit. The rows' draws are not seeded: RAND(N)'s first value moves in step with N, and with
      // seeds seq * 40 + j the answers and the noise were nearly linear in one another, so y was almost determined by
      // the answers (estimates of 5 to 10 for slopes of 0.05 to 0.41) and both sides' fits took 11 Newton steps. Both
      // sides read the same stored rows, so a run needs no fixed seed.
      const normal = (a = '', b = '') => `SQRT(-2 * LN(1 - RAND(${a}))) * COS(2 * PI() * RAND(${b}))`
      const xs = Array.from({ length: K }, (_, j) => `ROUND(${normal()}, 6) AS x${j + 1}`).join(', ')
      const eta = Array.from({ length: K }, (_, j) => `${((j % 2 ? -1 : 1) * (0.05 + 0.04 * j)).toFixed(2)} * x${j + 1}`).join(' + ')
      const answers = Array.from({ length: K }, (_, j) => `'x${j + 1}', x${j + 1}`).join(', ')
      const tSeed = performance.now()
      // The generated rows are materialised once (RAND() keeps the derived table from merging); in memory, not in
      // an on-disk temporary table.
      // Ids ascending with seq (UUID-shaped, round number first): the rows are appended to the primary key's B-tree
      // instead of scattered over it, which keeps seeding 10^6 rows to seconds with a small buffer pool.
      await exec(`SET STATEMENT tmp_table_size = 1073741824, max_heap_table_size = 1073741824 FOR INSERT INTO visits (id, organisation_id, round_id, village_id, enumerator_id, questionnaire_version_id, farm_code, manual_location_reason,
          answers, consent_at, started_at, saved_at, adopted, review_state, flags, device_hash, version, source, created_at, updated_at)
        SELECT CONCAT(LPAD(HEX(?), 8, '0'), '-0000-4000-8000-', LPAD(HEX(seq), 12, '0')), ?, ?, ? + seq MOD ${VILLAGES}, ?, ?, CONCAT('F', seq), 'imported',
          JSON_OBJECT(${answers}, 'adopted', JSON_EXTRACT(IF(y = 1, 'true', 'false'), '$')), NOW(3), NOW(3), NOW(3), y, 'accepted', '{}', SHA2(seq, 256), 1, 'import', NOW(), NOW()
        FROM (SELECT s0.*, IF(-0.2 + ${eta} + u + e > 0, 1, 0) AS y
              FROM (SELECT seq, ${xs}, 0.3 * ${normal(`(seq MOD ${VILLAGES}) + 7`, `(seq MOD ${VILLAGES}) + 11`)} AS u,
                      ${normal()} AS e FROM seq_1_to_${n}) s0) s`,
      [roundId, org.id, roundId, firstVillage, me.body.id, versionId])
      console.log(`seeded ${n} accepted visits in SQL in ${((performance.now() - tSeed) / 1000).toFixed(1)} s`)

      const request = { roundId, covariates: Array.from({ length: K }, (_, j) => ({ key: `x${j + 1}` })), link: 'probit', se: 'cluster' }
      // No warm-up: the first fit of a freshly written round is what a coordinator waits for; but InnoDB's own
      // after-work of the seed is let finish first, as it is before the peer.
      await settle()
      const rssBefore = rssMb(stack.server.pid!, 'VmRSS')
      const t0 = performance.now()
      const posted = await coordinator.post<{ id: number }>('/api/models', request)
      const postMs = performance.now() - t0
      if (posted.status !== 202) throw new Error(`POST /api/models: ${posted.status} ${JSON.stringify(posted.body).slice(0, 300)}`)
      let status = 'running'
      let asks = 0
      let body: { status: string, durationMs: number | null, results: { rows: { used: number }, coefficients: Array<{ estimate: number }>, timings: { designMs: number, fitMs: number, inferenceMs: number, marginsMs: number, predictionsMs: number, totalMs: number } } | null, error: unknown } | null = null
      // As the run's page asks: answered once the fit has ended (`?wait=`, at most RUN_WAIT_MAX_MS a request).
      while (status === 'running') {
        const answer = await coordinator.get<typeof body>(`/api/models/${posted.body.id}?wait=${RUN_WAIT_MAX_MS}`)
        asks++
        body = answer.body
        status = body!.status
      }
      const oursMs = performance.now() - t0
      if (status !== 'done') throw new Error(`the fit failed: ${JSON.stringify(body!.error)}`)
      const peak = rssMb(stack.server.pid!, 'VmHWM')
      // A GET of the finished run, timed on its own (median of 5).
      const gets: number[] = []
      for (let i = 0; i < 5; i++) {
        const g0 = performance.now()
        await coordinator.get(`/api/models/${posted.body.id}`)
        gets.push(performance.now() - g0)
      }
      gets.sort((a, b) => a - b)

      // The peer: mariadb CLI → pandas → statsmodels, timed from the start of the query.
      await settle()
      const cols = Array.from({ length: K }, (_, j) => `JSON_VALUE(answers, '$.x${j + 1}') AS x${j + 1}`).join(', ')
      const sql = `SELECT adopted, village_id AS village, ${cols} FROM visits WHERE round_id = ${roundId} AND review_state = 'accepted'`
      const command = `"${client}" --no-defaults --batch -h${url.hostname} -P${url.port} -u${decodeURIComponent(url.username)} ${url.pathname.slice(1)} -e "${sql.replaceAll('"', '\\"').replaceAll('$', '\\$')}" | ${PYTHON} -c '${PEER.replaceAll('\'', '\'"\'"\'')}' "$(date +%s.%N)"`
      const peer = JSON.parse((await sh(command, { MYSQL_PWD: decodeURIComponent(url.password) })).trim().split('\n').pop()!) as { total_ms: number, read_ms: number, fit_ms: number, rows: number, version: string, coef: number[] }
      const ours = body!.results!
      const maxDiff = Math.max(...ours.coefficients.map((c, j) => Math.abs(c.estimate - peer.coef[j]!)))
      if (peer.rows !== n || ours.rows.used !== n || maxDiff > 1e-6) console.log(`warning: rows ${ours.rows.used} vs ${peer.rows}, coefficients differ by ${maxDiff.toExponential(2)}`)
      const designMb = (n * (K + 1) * 8) / 2 ** 20
      const ratio = oursMs / peer.total_ms
      // The server's own split: reading the rows (query, typed columns, hashes) and the engine's fit in the worker.
      const engineMs = ours.timings.totalMs
      const t = ours.timings
      const readMs = (body!.durationMs ?? 0) - engineMs
      const load = loadAverage()
      entries.push({
        name: 'app fit path (POST → results by GET)', n, ours_ms: round(oursMs), peer: `mariadb CLI → pandas → statsmodels ${peer.version}`, peer_ms: round(peer.total_ms), ratio: round(ratio, 3), peak_rss_mb: round(peak),
        details: { load_average_1m: load, post_ms: round(postMs), get_ms: round(gets[2]!), ours_read_ms: round(readMs), ours_engine_ms: round(engineMs), peer_read_ms: round(peer.read_ms), peer_fit_ms: round(peer.fit_ms), rss_before_mb: round(rssBefore), design_mb: round(designMb),
          engine_design_ms: round(t.designMs), engine_fit_ms: round(t.fitMs), engine_checks_roc_ms: round(t.inferenceMs), engine_margins_ms: round(t.marginsMs), engine_villages_ms: round(t.predictionsMs) }
      })
      console.log(`n=${n}: engine parts (ms): design ${t.designMs.toFixed(0)}, fit ${t.fitMs.toFixed(0)}, checks and ROC ${t.inferenceMs.toFixed(0)}, margins ${t.marginsMs.toFixed(0)}, village predictions ${t.predictionsMs.toFixed(0)}`)
      console.log(`n=${n}: ours ${oursMs.toFixed(0)} ms (read ${readMs.toFixed(0)} + engine ${engineMs.toFixed(0)}; POST ${postMs.toFixed(0)} ms, GET ${gets[2]!.toFixed(0)} ms), peer ${peer.total_ms.toFixed(0)} ms, ratio ${ratio.toFixed(3)}, peak RSS ${peak.toFixed(0)} MB vs X ${designMb.toFixed(0)} MB, load ${load}`)
      rows.push([String(n), oursMs.toFixed(0), `${readMs.toFixed(0)}+${engineMs.toFixed(0)}`, postMs.toFixed(0), String(asks), gets[2]!.toFixed(0), peer.total_ms.toFixed(0), `${peer.read_ms.toFixed(0)}+${peer.fit_ms.toFixed(0)}`, ratio.toFixed(3), `${rssBefore.toFixed(0)}→${peak.toFixed(0)}`, designMb.toFixed(0), String(load)])
      await exec('DELETE FROM model_runs WHERE round_id = ?', [roundId])
    }
    console.log('app fit path: POST /api/models → results readable by GET, against mariadb CLI → pandas → statsmodels (cluster SEs + AME)')
    printTable(['n', 'ours ms', 'ours read+fit', 'POST ms', 'GETs', 'GET done ms', 'peer ms', 'peer read+fit', 'ratio', 'server RSS MB', 'X MB', 'load 1m'], rows)
    console.log('targets: ratio ≤ 0.5, POST ≤ 200 ms, GET ≤ 50 ms, peak RSS growth during the fit ≤ 3 × X (the design matrix, n × 11 doubles)')
    mergeResults(entries)
    await db.close()
  }
  finally {
    await stack.stop()
  }
}

main().catch((error) => {
  console.error(error)
  process.exit(1)
})
