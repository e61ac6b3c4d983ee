// Helpers for scripts/start.mjs and scripts/test.mjs. Node built-ins only: these run before node_modules exists.
import { spawn, spawnSync } from 'node:child_process'
import { existsSync } from 'node:fs'
import net from 'node:net'
import path from 'node:path'
import { fileURLToPath } from 'node:url'

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..')
export const DATA = path.join(ROOT, '.data')

export function say(message) {
  console.log(`[furrowcast] ${message}`)
}

/** Prints one clear line and exits: used for every problem the user must fix themselves. */
export function fail(message, code = 1) {
  console.error(`[furrowcast] ${message}`)
  process.exit(code)
}

export function isRoot() {
  return typeof process.getuid === 'function' && process.getuid() === 0
}

export function run(command, args, options = {}) {
  const result = spawnSync(command, args, { stdio: 'inherit', cwd: ROOT, ...options })
  if (result.error) throw result.error
  return result.status ?? 1
}

export function findExecutable(name, extraDirs = ['/usr/sbin', '/usr/bin', '/sbin']) {
  const dirs = [...(process.env.PATH ?? '').split(path.delimiter), ...extraDirs]
  for (const dir of dirs) {
    const candidate = path.join(dir, name)
    if (dir && existsSync(candidate)) return candidate
  }
  return null
}

let aptUpdated = false

/**
 * Installs a Debian package when `present()` says it is missing. Only root can; anyone else gets
 * one line naming the package.
 */
export function ensureDebianPackage(pkg, present, why) {
  if (present()) return
  if (!isRoot()) fail(`${why} needs the Debian package '${pkg}'. Install it (apt-get install ${pkg}) and run again.`)
  say(`installing Debian package ${pkg} (${why})`)
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
  if (!aptUpdated) {
    if (run('apt-get', ['update'], { env }) !== 0) fail('apt-get update failed; check the connection to the Debian mirror.')
    aptUpdated = true
  }
  if (run('apt-get', ['install', '-y', '--no-install-recommends', pkg], { env }) !== 0) fail(`apt-get install ${pkg} failed.`)
  if (!present()) fail(`the Debian package '${pkg}' was installed but is still not usable.`)
}

export function ensureNodeModules() {
  if (existsSync(path.join(ROOT, 'node_modules', '.package-lock.json'))) return
  say('installing npm packages (npm ci)')
  if (run('npm', ['ci', '--no-audit', '--no-fund']) !== 0) fail('npm ci failed.')
}

export function portIsFree(port, host = '127.0.0.1') {
  return new Promise((resolve) => {
    const server = net.createServer()
    server.once('error', () => resolve(false))
    server.once('listening', () => server.close(() => resolve(true)))
    server.listen(port, host)
  })
}

export async function requireFreePort(port, what, variable) {
  if (!(await portIsFree(port))) {
    // Thrown, not exited, so that whatever was started before this check is stopped again.
    throw new Error(`port ${port} on 127.0.0.1 is already taken, so ${what} cannot start. Stop the program using it or set ${variable} to another port.`)
  }
}

export function canConnect(port, host = '127.0.0.1') {
  return new Promise((resolve) => {
    const socket = net.connect(port, host)
    socket.once('connect', () => {
      socket.destroy()
      resolve(true)
    })
    socket.once('error', () => resolve(false))
  })
}

export async function waitFor(check, what, timeoutMs = 60_000) {
  const started = Date.now()
  while (Date.now() - started < timeoutMs) {
    if (await check()) return
    await new Promise(resolve => setTimeout(resolve, 200))
  }
  throw new Error(`${what} did not become ready within ${Math.round(timeoutMs / 1000)} s`)
}

/** A long-running child whose output is prefixed, and which is stopped (and awaited) on shutdown. */
export function startChild(name, command, args, options = {}) {
  // detached: a terminal's Ctrl-C reaches only us, and we stop the children in order (database last).
  const child = spawn(command, args, { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'], detached: true, ...options })
  const prefix = line => `  ${name} | ${line}`
  const relay = stream => (chunk) => {
    for (const line of String(chunk).split('\n')) if (line.trim()) stream.write(`${prefix(line)}\n`)
  }
  if (!options.quiet) {
    child.stdout?.on('data', relay(process.stdout))
    child.stderr?.on('data', relay(process.stderr))
  }
  child.exited = new Promise(resolve => child.once('exit', (code, signal) => resolve({ code, signal })))
  child.stopGracefully = async (timeoutMs = 30_000) => {
    if (child.exitCode !== null || child.signalCode !== null) return
    child.kill('SIGTERM')
    const timer = setTimeout(() => child.kill('SIGKILL'), timeoutMs)
    await child.exited
    clearTimeout(timer)
  }
  return child
}
