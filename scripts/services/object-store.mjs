// A local stand-in for the S3 bucket that production uses: s3rver on loopback, keeping objects under a folder.
// Usage: object-store.mjs PORT FOLDER BUCKET
import { mkdirSync } from 'node:fs'
import path from 'node:path'
import S3rver from 's3rver'

const [port, dir, bucket] = [Number(process.argv[2]), process.argv[3], process.argv[4]]
if (!port || !dir || !bucket) {
  console.error('usage: object-store.mjs PORT FOLDER BUCKET')
  process.exit(2)
}
mkdirSync(dir, { recursive: true })

const server = new S3rver({
  port,
  address: '127.0.0.1',
  directory: dir,
  silent: true,
  configureBuckets: [{ name: bucket }]
})
await server.run()
console.log(`object store on http://127.0.0.1:${port}, bucket ${bucket}, keeping objects in ${path.relative(process.cwd(), dir)}`)

for (const signal of ['SIGINT', 'SIGTERM']) {
  process.on(signal, () => server.close().then(() => process.exit(0), () => process.exit(1)))
}
