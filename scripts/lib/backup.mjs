// Shared by scripts/backup.mjs and scripts/restore.mjs: where backup sets live, how they chain, and the two
// stores they cover (the MariaDB server, through Debian's mariadb-backup, and the photo bucket, through the S3 API).
import { spawnSync } from 'node:child_process'
import { existsSync, readFileSync, readdirSync } from 'node:fs'
import path from 'node:path'
import { DATA, ensureDebianPackage, fail, findExecutable } from './system.mjs'

export const LOCAL_SOCKET = path.join(DATA, 'mariadb', 'mariadb.sock')
export const MANIFEST = 'manifest.json'

/** Reads `--name value` and `--flag` arguments; anything unknown is an error the user sees. */
export function parseArgs(argv, known) {
  const options = {}
  for (let i = 0; i < argv.length; i++) {
    const name = argv[i].replace(/^--/, '')
    if (!argv[i].startsWith('--') || !(name in known)) fail(`unknown argument '${argv[i]}'. Known: ${Object.keys(known).map(k => `--${k}`).join(' ')}`, 2)
    if (known[name] === 'flag') options[name] = true
    else {
      const value = argv[++i]
      if (value === undefined) fail(`--${name} needs a value`, 2)
      options[name] = value
    }
  }
  return options
}

export function mariadbBackup() {
  ensureDebianPackage('mariadb-backup', () => Boolean(findExecutable('mariadb-backup')), 'backups')
  return findExecutable('mariadb-backup')
}

/** Runs mariadb-backup with no option files read (the system's my.cnf describes another server). */
export function runBackupTool(args) {
  const result = spawnSync(mariadbBackup(), ['--no-defaults', ...args], { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 })
  if (result.status !== 0) {
    const last = (result.stderr || '').trim().split('\n').slice(-3).join(' / ')
    fail(`mariadb-backup ${args.find(a => a.startsWith('--') && !a.includes('=')) ?? ''} failed: ${last}`)
  }
  return result
}

/** One SQL query through the command-line client, as tab-separated rows. */
export function query(connection, sql) {
  const client = findExecutable('mariadb') ?? findExecutable('mysql')
  const result = spawnSync(client, ['--no-defaults', ...connection, '--batch', '--skip-column-names', '-e', sql], { encoding: 'utf8' })
  if (result.status !== 0) throw new Error(`query failed: ${result.stderr.trim()}`)
  return result.stdout.split('\n').filter(Boolean).map(line => line.split('\t'))
}

/**
 * How the tools reach the database server: the private local server's socket as root (what `npm start` runs), or
 * BACKUP_DB_SOCKET / BACKUP_DB_USER / BACKUP_DB_PASSWORD on a deployment's database host. mariadb-backup copies the
 * server's files, so it always runs on the machine that holds them.
 */
export function connectionArgs() {
  const socket = process.env.BACKUP_DB_SOCKET ?? LOCAL_SOCKET
  if (!existsSync(socket)) fail(`no database server socket at ${path.relative(process.cwd(), socket) || socket}: start Furrowcast (npm start) or set BACKUP_DB_SOCKET.`)
  const args = [`--socket=${socket}`, `--user=${process.env.BACKUP_DB_USER ?? 'root'}`]
  if (process.env.BACKUP_DB_PASSWORD) args.push(`--password=${process.env.BACKUP_DB_PASSWORD}`)
  return args
}

export function backupRoot(option) {
  return path.resolve(option ?? process.env.BACKUP_DIR ?? path.join(DATA, 'backups'))
}

export function readManifest(dir) {
  const file = path.join(dir, MANIFEST)
  if (!existsSync(file)) fail(`${dir} is not a finished backup set (no ${MANIFEST}).`)
  return JSON.parse(readFileSync(file, 'utf8'))
}

/** Finished sets in a backup folder, oldest first (set names start with a sortable UTC time). */
export function finishedSets(root) {
  if (!existsSync(root)) return []
  return readdirSync(root).filter(name => existsSync(path.join(root, name, MANIFEST))).sort()
}

/** The chain a restore needs: the full set, then each incremental on top of it, ending with `setDir`. */
export function chainOf(setDir) {
  const chain = []
  let dir = setDir
  while (dir) {
    const manifest = readManifest(dir)
    chain.unshift({ dir, manifest })
    dir = manifest.base ? path.join(path.dirname(dir), manifest.base) : null
    if (chain.length > 1000) fail('the backup chain does not end in a full backup.')
  }
  if (chain[0].manifest.kind !== 'full') fail('the backup chain does not start with a full backup.')
  return chain
}

/** The S3 client for the photo bucket, configured as the app is (S3_* variables; the local fake by default). */
export async function photoStore(bucketOption) {
  const { S3Client } = await import('@aws-sdk/client-s3')
  const endpoint = process.env.S3_ENDPOINT ?? `http://127.0.0.1:${process.env.FURROWCAST_S3_PORT ?? 4568}`
  const client = new S3Client({
    endpoint,
    region: process.env.S3_REGION ?? 'us-east-1',
    forcePathStyle: true,
    credentials: { accessKeyId: process.env.S3_ACCESS_KEY_ID ?? 'S3RVER', secretAccessKey: process.env.S3_SECRET_ACCESS_KEY ?? 'S3RVER' },
    requestChecksumCalculation: 'WHEN_REQUIRED',
    responseChecksumValidation: 'WHEN_REQUIRED'
  })
  return { client, bucket: bucketOption ?? process.env.S3_BUCKET ?? 'furrowcast-photos' }
}

/** Objects the app keeps for good; `incoming/` holds uploads that are still being checked. */
export const keptObject = key => !key.startsWith('incoming/')
