// `npm run restore -- --datadir DIR | --replace-local [--from SET | --backups DIR] [--bucket NAME] [--skip-photos]`:
// rebuilds the database server's files from a full backup set and its incrementals (mariadb-backup --prepare on a
// copy, so the sets stay reusable, then --copy-back into an empty folder) and puts the photos that existed at that
// set back into the bucket, each checked against the SHA-256 taken when it was backed up.
import { createHash } from 'node:crypto'
import { cpSync, existsSync, readFileSync, readdirSync, renameSync, rmSync } from 'node:fs'
import path from 'node:path'
import { LOCAL_SOCKET, backupRoot, chainOf, finishedSets, parseArgs, photoStore, runBackupTool } from './lib/backup.mjs'
import { DATA, ensureNodeModules, fail, say } from './lib/system.mjs'

const options = parseArgs(process.argv.slice(2), {
  'from': 'value', 'backups': 'value', 'datadir': 'value', 'replace-local': 'flag', 'bucket': 'value', 'skip-photos': 'flag'
})
ensureNodeModules()
if (Boolean(options.datadir) === Boolean(options['replace-local'])) fail('say where the database files go: --datadir DIR (an empty or new folder) or --replace-local (the private server of npm start, stopped).', 2)

const datadir = options.datadir ? path.resolve(options.datadir) : path.join(DATA, 'mariadb', 'data')
if (options['replace-local'] && existsSync(LOCAL_SOCKET)) fail('the local database server is running: stop npm start first.')
if (options.datadir && existsSync(datadir) && readdirSync(datadir).length > 0) fail(`${datadir} is not empty: restore into a new or empty folder.`)

let setDir = options.from ? path.resolve(options.from) : undefined
if (!setDir) {
  const root = backupRoot(options.backups)
  const newest = finishedSets(root).at(-1)
  if (!newest) fail(`no finished backup set in ${root}.`)
  setDir = path.join(root, newest)
}
const chain = chainOf(setDir)
say(`restoring ${chain.map(c => path.basename(c.dir)).join(' + ')}`)

// Only once the chain is known to be complete are the current local files moved aside (never deleted).
if (options['replace-local'] && existsSync(datadir)) {
  const aside = `${datadir}.before-restore-${Date.now()}`
  renameSync(datadir, aside)
  say(`kept the current database files in ${path.relative(process.cwd(), aside)}`)
}

// Prepare a copy: preparing changes the files, and the backup sets must stay usable for the next restore.
const work = `${datadir}.prepare-${process.pid}`
rmSync(work, { recursive: true, force: true })
cpSync(path.join(chain[0].dir, 'database'), work, { recursive: true })
try {
  runBackupTool(['--prepare', `--target-dir=${work}`])
  for (const step of chain.slice(1)) runBackupTool(['--prepare', `--target-dir=${work}`, `--incremental-dir=${path.join(step.dir, 'database')}`])
  runBackupTool(['--copy-back', `--target-dir=${work}`, `--datadir=${datadir}`])
}
finally {
  rmSync(work, { recursive: true, force: true })
}
say(`database files restored into ${path.relative(process.cwd(), datadir) || datadir}`)

const last = chain.at(-1).manifest
if (options['skip-photos'] || last.photos === 'skipped') say('photos not restored (skipped)')
else say(`${await restoreObjects(last.objects)} photos restored`)
if (!options['replace-local']) say('start MariaDB on that folder (mariadbd --datadir=…), or use --replace-local with npm start stopped.')

async function restoreObjects(objects) {
  const { CreateBucketCommand, PutObjectCommand } = await import('@aws-sdk/client-s3')
  const { client, bucket } = await photoStore(options.bucket)
  await client.send(new CreateBucketCommand({ Bucket: bucket })).catch((error) => {
    if (!['BucketAlreadyOwnedByYou', 'BucketAlreadyExists'].includes(error?.name)) throw error
  })
  const root = path.dirname(setDir)
  for (const object of objects) {
    const bytes = readFileSync(path.join(root, object.set, 'objects', object.key))
    if (createHash('sha256').update(bytes).digest('hex') !== object.sha256) fail(`the backed-up copy of ${object.key} is damaged (SHA-256 differs); nothing further restored.`)
    await client.send(new PutObjectCommand({ Bucket: bucket, Key: object.key, Body: bytes, ContentType: object.contentType, ContentLength: bytes.length }))
  }
  return objects.length
}
