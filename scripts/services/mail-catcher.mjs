// A local stand-in for the SMTP relay that production uses: accepts every message on loopback and keeps
// it as a file (raw .eml plus a small .json envelope) under the given folder, for the outbox page and tests.
import { mkdirSync, writeFileSync } from 'node:fs'
import path from 'node:path'
import { randomUUID } from 'node:crypto'
import { SMTPServer } from 'smtp-server'

const [port, dir] = [Number(process.argv[2]), process.argv[3]]
if (!port || !dir) {
  console.error('usage: mail-catcher.mjs PORT FOLDER')
  process.exit(2)
}
mkdirSync(dir, { recursive: true })

const server = new SMTPServer({
  authOptional: true,
  disabledCommands: ['STARTTLS'],
  size: 25 * 1024 * 1024,
  onData(stream, session, callback) {
    const chunks = []
    stream.on('data', chunk => chunks.push(chunk))
    stream.on('end', () => {
      const raw = Buffer.concat(chunks)
      const id = `${new Date().toISOString().replace(/[:.]/g, '-')}-${randomUUID().slice(0, 8)}`
      const envelope = {
        id,
        receivedAt: new Date().toISOString(),
        from: session.envelope.mailFrom ? session.envelope.mailFrom.address : null,
        to: session.envelope.rcptTo.map(r => r.address)
      }
      // Write the message before its envelope: a reader that sees the .json can always read the .eml.
      writeFileSync(path.join(dir, `${id}.eml`), raw)
      writeFileSync(path.join(dir, `${id}.json`), JSON.stringify(envelope, null, 2))
      callback()
    })
  }
})

server.on('error', error => console.error(`mail catcher error: ${error.message}`))
server.listen(port, '127.0.0.1', () => console.log(`mail catcher on smtp://127.0.0.1:${port}, keeping messages in ${path.relative(process.cwd(), dir)}`))

for (const signal of ['SIGINT', 'SIGTERM']) {
  process.on(signal, () => server.close(() => process.exit(0)))
}
