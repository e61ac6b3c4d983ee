// `npm run backup [-- --incremental] [--to DIR]`: one backup set of the database server (mariadb-backup, full or
// incremental on the newest set) and of the photo bucket (the objects new since the last set, plus the list of every
// object kept at this moment, so a restore brings back exactly what existed then — an erased photo stays erased).
// A set is written under a temporary name and renamed only when complete, so a cut-off run never counts.
import { createHash } from 'node:crypto'
import { mkdirSync, readdirSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs'
import path from 'node:path'
import { MANIFEST, backupRoot, connectionArgs, finishedSets, keptObject, parseArgs, photoStore, query, readManifest, runBackupTool } from './lib/backup.mjs'
import { ensureNodeModules, fail, say } from './lib/system.mjs'

const options = parseArgs(process.argv.slice(2), { 'incremental': 'flag', 'to': 'value', 'skip-photos': 'flag' })
ensureNodeModules()
const root = backupRoot(options.to)
const sets = finishedSets(root)
const kind = options.incremental ? 'incremental' : 'full'
const base = options.incremental ? sets.at(-1) : undefined
if (options.incremental && !base) fail(`no backup set in ${root} to build an incremental backup on: make a full one first (npm run backup).`)

const name = `${new Date().toISOString().replace(/[-:]/g, '').replace(/\.\d+Z$/, 'Z')}-${kind}`
const dir = path.join(root, name)
const partial = `${dir}.partial`
rmSync(partial, { recursive: true, force: true })
mkdirSync(partial, { recursive: true })

const connection = connectionArgs()
const [[datadir]] = query(connection, 'SELECT @@datadir')
say(`backing up the database server (${kind}${base ? ` on ${base}` : ''})`)
runBackupTool([
  '--backup',
  `--target-dir=${path.join(partial, 'database')}`,
  `--datadir=${datadir}`,
  ...connection,
  ...(base ? [`--incremental-basedir=${path.join(root, base, 'database')}`] : [])
])

const objects = options['skip-photos'] ? [] : await backUpObjects()
const manifest = {
  kind,
  base: base ?? null,
  createdAt: new Date().toISOString(),
  server: query(connection, 'SELECT VERSION()')[0][0],
  databaseBytes: folderBytes(path.join(partial, 'database')),
  photos: options['skip-photos'] ? 'skipped' : 'included',
  objects
}
writeFileSync(path.join(partial, MANIFEST), JSON.stringify(manifest, null, 1))
renameSync(partial, dir)
const fresh = objects.filter(o => o.set === name)
say(`backup set ${path.relative(process.cwd(), dir) || dir}: database ${(manifest.databaseBytes / 1e6).toFixed(1)} MB, ${objects.length} photos kept (${fresh.length} copied in this set)`)

/** Copies the objects not already held by the chain (same key and ETag) and lists every object kept now. */
async function backUpObjects() {
  const { ListObjectsV2Command, GetObjectCommand } = await import('@aws-sdk/client-s3')
  const { client, bucket } = await photoStore()
  const earlier = new Map((base ? readManifest(path.join(root, base)).objects : []).map(o => [o.key, o]))
  const listed = []
  let token
  do {
    const page = await client.send(new ListObjectsV2Command({ Bucket: bucket, ContinuationToken: token }))
    listed.push(...(page.Contents ?? []))
    token = page.IsTruncated ? page.NextContinuationToken : undefined
  } while (token)
  const kept = []
  for (const object of listed.filter(o => keptObject(o.Key))) {
    if (object.Key.split('/').some(part => part === '..' || part === '')) fail(`refusing to back up an object with an unsafe key: ${JSON.stringify(object.Key)}`)
    const etag = (object.ETag ?? '').replace(/"/g, '')
    const known = earlier.get(object.Key)
    if (known && known.etag === etag) {
      kept.push(known)
      continue
    }
    const answer = await client.send(new GetObjectCommand({ Bucket: bucket, Key: object.Key }))
    const bytes = Buffer.from(await answer.Body.transformToByteArray())
    const file = path.join(partial, 'objects', object.Key)
    mkdirSync(path.dirname(file), { recursive: true })
    writeFileSync(file, bytes)
    kept.push({ key: object.Key, etag, size: bytes.length, contentType: answer.ContentType ?? 'application/octet-stream', sha256: createHash('sha256').update(bytes).digest('hex'), set: name })
  }
  return kept
}

function folderBytes(folder) {
  let total = 0
  for (const entry of readdirSync(folder, { withFileTypes: true, recursive: true })) {
    if (entry.isFile()) total += statSync(path.join(entry.parentPath, entry.name)).size
  }
  return total
}
