// `npm start`: everything Furrowcast needs, on this machine's loopback, with the demo organisation.
import { readFileSync } from 'node:fs'
import path from 'node:path'
import { startStack } from './lib/stack.mjs'
import { DATA, ROOT, say } from './lib/system.mjs'

const appPort = Number(process.env.PORT ?? 3000)
const stack = await startStack({
  database: 'furrowcast',
  appPort,
  smtpPort: Number(process.env.FURROWCAST_SMTP_PORT ?? 2525),
  s3Port: Number(process.env.FURROWCAST_S3_PORT ?? 4568),
  objectDir: path.join(DATA, 'objects'),
  outbox: path.join(DATA, 'outbox'),
  seed: process.env.FURROWCAST_SEED ?? 'demo',
  fresh: false,
  secretFile: 'session-secret'
})

const demo = JSON.parse(readFileSync(path.join(ROOT, 'server/db/demo-people.json'), 'utf8'))
console.log(`
  Furrowcast is running at ${stack.url}

  Demo sign-ins (password for all: ${demo.password}):
${demo.users.map(u => `    ${u.role.padEnd(12)} ${u.email}`).join('\n')}

  Mail sent by the app is kept in .data/outbox, photos in .data/objects. Press Ctrl-C to stop.
`)

// Ctrl-C is handled by startStack; here only the case of the app server dying on its own.
stack.server.exited.then(async ({ code }) => {
  if (stack.isStopping()) return
  say(`the app server exited (code ${code}); stopping the rest`)
  await stack.stop()
  process.exit(1)
})
