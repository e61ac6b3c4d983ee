import { type ChildProcess, execFile, spawn, spawnSync } from 'node:child_process'
import { createHash } from 'node:crypto'
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import path from 'node:path'
import { promisify } from 'node:util'
import { GetObjectCommand, ListObjectsV2Command, S3Client } from '@aws-sdk/client-s3'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { User } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { type Client, baseUrl, demoUser, freshClient } from '../support/server'
import { storedColumnsSql, tableDigestSql } from '../support/table-digest'

// Backs up the test server's own MariaDB (full, then incremental) and its photo bucket with the real commands,
// restores both into a fresh MariaDB data folder and a fresh bucket, and compares them table by table and photo by photo.
const ROOT = process.cwd()
const SOURCE_SOCKET = path.join(ROOT, '.data', 'mariadb', 'mariadb.sock')
const DATABASE = new URL(process.env.DATABASE_URL ?? 'mariadb://x@h/none').pathname.slice(1)
const RESTORED_BUCKET = 'furrowcast-restore-check'
const execFileAsync = promisify(execFile)

let work: string
let restored: ChildProcess | undefined
let enumerator: Client
let round: TestRound

const s3 = new S3Client({
  endpoint: process.env.S3_ENDPOINT,
  region: 'us-east-1',
  forcePathStyle: true,
  credentials: { accessKeyId: 'S3RVER', secretAccessKey: 'S3RVER' }
})

/** Runs a script as a user would. Asynchronously: a blocked event loop would leave the HTTP client stale sockets. */
async function npmScript(script: string, ...args: string[]) {
  try {
    const { stdout } = await execFileAsync(process.execPath, [path.join(ROOT, 'scripts', `${script}.mjs`), ...args], {
      cwd: ROOT, env: { ...process.env, BACKUP_DB_SOCKET: SOURCE_SOCKET }, maxBuffer: 16 * 1024 * 1024
    })
    return stdout
  }
  catch (error) {
    const failed = error as { code?: number, stderr?: string, stdout?: string }
    throw new Error(`${script} failed (${failed.code}): ${failed.stderr}${failed.stdout}`)
  }
}

/** Row count and digest of the stored columns of every table of the test database, through the server behind `socket`. */
function fingerprint(socket: string): Record<string, string> {
  const sql = (statement: string) => {
    const answer = spawnSync('mariadb', ['--no-defaults', `--socket=${socket}`, '-uroot', '--batch', '--skip-column-names', '-e', statement], { encoding: 'utf8' })
    if (answer.status !== 0) throw new Error(answer.stderr)
    return answer.stdout.trim().split('\n').filter(Boolean).map(line => line.split('\t'))
  }
  const result: Record<string, string> = {}
  for (const [table, columns] of sql(storedColumnsSql(DATABASE)) as Array<[string, string]>) {
    const [[count, digest]] = sql(tableDigestSql(DATABASE, table, columns)) as [[string, string]]
    result[table] = `${count} rows, digest ${digest}`
  }
  return result
}

async function photoDigests(bucket: string): Promise<Record<string, string>> {
  const list = await s3.send(new ListObjectsV2Command({ Bucket: bucket, Prefix: 'visits/' }))
  const digests: Record<string, string> = {}
  for (const object of list.Contents ?? []) {
    const body = await s3.send(new GetObjectCommand({ Bucket: bucket, Key: object.Key! }))
    digests[object.Key!] = createHash('sha256').update(await body.Body!.transformToByteArray()).digest('hex')
  }
  return digests
}

async function visitWithPhoto(seed: number) {
  const visit = makeVisit(round)
  expect((await enumerator.post('/api/sync/visits', { visits: [visit] })).status).toBe(200)
  // A small but real JPEG start (SOI + APP0 marker), so the photo route's content checks accept it.
  const bytes = Buffer.concat([Buffer.from([0xFF, 0xD8, 0xFF, 0xE0]), Buffer.alloc(20_000, seed), Buffer.from([0xFF, 0xD9])])
  const photoId = crypto.randomUUID()
  const sha = createHash('sha256').update(bytes).digest('hex')
  const put = await fetch(`${baseUrl()}/api/photos/${photoId}?visitId=${visit.id}&sha256=${sha}`, {
    method: 'PUT',
    headers: { 'content-type': 'image/jpeg', 'cookie': enumerator.cookieHeader(), 'x-forwarded-for': '10.9.9.9', 'origin': baseUrl() },
    body: bytes
  })
  expect(put.status).toBe(200)
}

async function waitForSocket(socket: string) {
  for (let i = 0; i < 300 && !existsSync(socket); i++) await new Promise(resolve => setTimeout(resolve, 100))
  if (!existsSync(socket)) throw new Error('the restored MariaDB did not start')
}

beforeAll(async () => {
  testDatabase()
  work = mkdtempSync(path.join(tmpdir(), 'furrowcast-backup-'))
  const coordinator = freshClient()
  enumerator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  await enumerator.signIn(demoUser('enumerator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id)
})

afterAll(async () => {
  if (restored && restored.exitCode === null) {
    restored.kill('SIGTERM')
    await new Promise(resolve => restored!.once('exit', resolve))
  }
  if (work) rmSync(work, { recursive: true, force: true })
  await closeTestDatabase()
})

describe('backup and restore', () => {
  it('restores a full plus an incremental backup into a fresh server and bucket with identical tables and photos', async () => {
    const backups = path.join(work, 'backups')
    await visitWithPhoto(1)
    await npmScript('backup', '--to', backups)
    // Written after the full set: only the incremental set holds these.
    await visitWithPhoto(2)
    await visitWithPhoto(3)

    // The app writes on its own now and then (mail retries, sign-in records): back up until nothing moved meanwhile.
    let before: Record<string, string> = {}
    let after: Record<string, string> = { moving: 'yes' }
    for (let attempt = 0; attempt < 4 && JSON.stringify(before) !== JSON.stringify(after); attempt++) {
      before = fingerprint(SOURCE_SOCKET)
      await npmScript('backup', '--to', backups, '--incremental')
      after = fingerprint(SOURCE_SOCKET)
    }
    expect(after).toEqual(before)
    expect(Object.keys(after)).toContain('visits')
    const sourcePhotos = await photoDigests(process.env.S3_BUCKET ?? 'furrowcast-photos')

    const datadir = path.join(work, 'restored-data')
    await npmScript('restore', '--backups', backups, '--datadir', datadir, '--bucket', RESTORED_BUCKET)
    const socket = path.join(work, 'restored.sock')
    restored = spawn('mariadbd', [
      '--no-defaults', `--datadir=${datadir}`, `--socket=${socket}`, '--skip-networking', '--user=root',
      `--pid-file=${path.join(work, 'restored.pid')}`, `--log-error=${path.join(work, 'restored.err')}`, '--innodb-buffer-pool-size=64M'
    ], { stdio: 'ignore' })
    await waitForSocket(socket)

    expect(fingerprint(socket)).toEqual(after)
    const restoredPhotos = await photoDigests(RESTORED_BUCKET)
    expect(Object.keys(restoredPhotos).length).toBeGreaterThanOrEqual(3)
    expect(restoredPhotos).toEqual(sourcePhotos)
  }, 240_000)

  it('refuses to restore over a folder that holds data, and an incremental with nothing to build on', async () => {
    const emptyRoot = path.join(work, 'none')
    await expect(npmScript('backup', '--to', emptyRoot, '--incremental')).rejects.toThrow(/make a full one first/)
    const occupied = path.join(work, 'occupied')
    mkdirSync(occupied)
    writeFileSync(path.join(occupied, 'ibdata1'), 'data that must not be overwritten')
    await expect(npmScript('restore', '--backups', path.join(work, 'backups'), '--datadir', occupied)).rejects.toThrow(/not empty/)
    expect(readFileSync(path.join(occupied, 'ibdata1'), 'utf8')).toBe('data that must not be overwritten')
  })
})
