/**
 * Tablet first-load benchmark: an enumerator opens /field on an empty cache over an emulated rural link
 * (Chromium's network emulation through CDP: 1.6 Mbit/s down, 750 kbit/s up, 150 ms latency) and starts a visit.
 * Times from navigation until the visit form is usable (its first field visible and enabled; target ≤ 3 s), the
 * tablet's PIN chosen on the way as a new tablet asks (the typing takes no time; the PIN's key stretching does), and
 * counts the JavaScript bytes that crossed the wire (as encoded; target ≤ 200 KB). Side by side with the same
 * pages served uncompressed (the browser asking for `Accept-Encoding: identity`), as they were served before.
 * Also prints the service worker's precache: entries, raw bytes and brotli bytes of the files it lists.
 * Starts its own stack on the bench database (ports: FURROWCAST_BENCH_PORT, FURROWCAST_BENCH_SMTP_PORT,
 * FURROWCAST_BENCH_S3_PORT). Run: npx tsx bench/tablet.bench.ts
 */
import { existsSync, readFileSync, statSync } from 'node:fs'
import { join } from 'node:path'
import { chromium, type Browser } from 'playwright-core'
import { startStack } from '../scripts/lib/stack.mjs'
import { DATA, ROOT } from '../scripts/lib/system.mjs'
import { openFieldStore } from '../tests/support/field-pin'
import { loadAverage, mergeResults, printTable, round } from './lib/results-file'

const LINK = { offline: false, latency: 150, downloadThroughput: 1.6e6 / 8, uploadThroughput: 750e3 / 8 }
const FORM_TARGET_MS = 3000
const JS_TARGET_BYTES = 200 * 1024
const RUNS = 3

/** ms: until the form is usable; pinMs: until the PIN screen shows; openMs: until the PIN is set and the field page open. */
interface Load { ms: number, pinMs: number, openMs: number, jsBytes: number, allBytes: number, jsFiles: number }

async function firstLoad(browser: Browser, url: string, credentials: { email: string, password: string }, compressed: boolean): Promise<Load> {
  const context = await browser.newContext({
    baseURL: url,
    viewport: { width: 1180, height: 820 },
    serviceWorkers: 'allow',
    extraHTTPHeaders: { 'x-forwarded-for': `10.9.${Math.floor(Math.random() * 250)}.${1 + Math.floor(Math.random() * 250)}`, ...(compressed ? {} : { 'accept-encoding': 'identity' }) }
  })
  try {
    // Signed in through the route (no page load), so the cache is still empty when /field opens.
    const answer = await context.request.post('/api/auth/signin', { data: credentials })
    if (!answer.ok()) throw new Error(`sign-in failed: ${answer.status()}`)
    const page = await context.newPage()
    const cdp = await context.newCDPSession(page)
    // The cache is empty because the context is new; it is not disabled: with the cache off, every file the page
    // preloads (modulepreload) was fetched a second time when the script imported it, as no tablet would.
    await cdp.send('Network.enable')
    await cdp.send('Network.emulateNetworkConditions', LINK)
    let started = Date.now()
    const types = new Map<string, string>()
    // The waterfall (FURROWCAST_BENCH_WATERFALL=1): when each request started and finished after navigation, and
    // its bytes on the wire — what the time until the form is usable is made of.
    const requests = new Map<string, { url: string, start: number, end?: number, bytes?: number }>()
    cdp.on('Network.requestWillBeSent', e => requests.set(e.requestId, { url: e.request.url.replace(url, ''), start: Date.now() - started }))
    let jsBytes = 0, allBytes = 0, jsFiles = 0, counting = true
    cdp.on('Network.responseReceived', e => types.set(e.requestId, e.type))
    cdp.on('Network.loadingFinished', (e) => {
      const r = requests.get(e.requestId)
      if (r) Object.assign(r, { end: Date.now() - started, bytes: e.encodedDataLength })
      if (!counting) return
      allBytes += e.encodedDataLength
      if (types.get(e.requestId) === 'Script') {
        jsBytes += e.encodedDataLength
        jsFiles++
      }
    })
    started = Date.now()
    await page.goto('/field', { waitUntil: 'commit' })
    // A new tablet asks for a PIN before anything else (the store is encrypted): chosen as a person would, at once.
    const pinShown = page.getByTestId('field-pin-setup').waitFor({ timeout: 60_000 }).then(() => Date.now() - started)
    await openFieldStore(page)
    const pinAt = await pinShown
    const storeOpenAt = Date.now() - started
    await page.getByRole('link', { name: 'New visit' }).first().click({ timeout: 60_000 })
    // The form opens on consent (interview order): usable once its checkbox can be ticked and the farm code typed.
    await page.getByRole('checkbox', { name: /informed consent/ }).check({ timeout: 60_000 })
    await page.getByLabel('Farm code *').fill('BENCH-1', { timeout: 60_000 })
    const ms = Date.now() - started
    counting = false
    if (process.env.FURROWCAST_BENCH_WATERFALL) {
      console.log(`waterfall (${compressed ? 'compressed' : 'uncompressed'}), form usable at ${ms} ms:`)
      for (const r of [...requests.values()].sort((a, b) => a.start - b.start)) {
        console.log(`  ${String(r.start).padStart(5)} → ${String(r.end ?? '…').padStart(5)} ms ${String(r.bytes ?? '').padStart(7)} B  ${r.url.slice(0, 90)}`)
      }
    }
    return { ms, pinMs: pinAt, openMs: storeOpenAt, jsBytes, allBytes, jsFiles }
  }
  finally {
    await context.close()
  }
}

/** The files the built service worker precaches, with their sizes as stored and as brotli (what crosses the wire). */
function precache() {
  const publicDir = join(ROOT, '.output', 'public')
  const sw = readFileSync(join(publicDir, 'sw.js'), 'utf8')
  const urls = [...sw.matchAll(/url:"([^"]+)"/g)].map(m => m[1]!)
  let raw = 0, brotli = 0
  for (const url of urls) {
    const file = join(publicDir, url.replace(/^\//, ''))
    if (!existsSync(file)) continue
    raw += statSync(file).size
    brotli += existsSync(`${file}.br`) ? statSync(`${file}.br`).size : statSync(file).size
  }
  return { entries: urls.length, raw, brotli }
}

async function main() {
  const stack = await startStack({
    database: 'furrowcast_bench',
    appPort: Number(process.env.FURROWCAST_BENCH_PORT ?? 3200),
    smtpPort: Number(process.env.FURROWCAST_BENCH_SMTP_PORT ?? 2527),
    s3Port: Number(process.env.FURROWCAST_BENCH_S3_PORT ?? 4570),
    objectDir: join(DATA, 'furrowcast_bench', 'objects'),
    outbox: join(DATA, 'furrowcast_bench', 'outbox'),
    seed: 'demo',
    fresh: true,
    secretFile: 'bench-session-secret',
    extraEnv: { FURROWCAST_TRUST_PROXY: '1' }
  })
  const browser = await chromium.launch({
    executablePath: '/usr/bin/chromium',
    headless: true,
    args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-quic', '--no-first-run']
  })
  try {
    const { DEMO, demoUser } = await import('../tests/support/server')
    const credentials = { email: demoUser('enumerator').email, password: DEMO.password }
    const best = async (compressed: boolean) => {
      const loads: Load[] = []
      for (let i = 0; i < RUNS; i++) loads.push(await firstLoad(browser, stack.url, credentials, compressed))
      return loads.sort((a, b) => a.ms - b.ms)[0]!
    }
    const ours = await best(true)
    const peer = await best(false)
    const kb = (b: number) => (b / 1024).toFixed(1)
    printTable(['tablet first load of /field (1.6 Mbit/s, 150 ms)', 'PIN screen ms', 'PIN set, field page ms', 'usable form ms', 'JS KB on the wire', 'JS files', 'all KB on the wire', 'targets'], [
      ['compressed (gzip/brotli, ours)', String(ours.pinMs), String(ours.openMs), String(ours.ms), kb(ours.jsBytes), String(ours.jsFiles), kb(ours.allBytes),
        `${ours.ms <= FORM_TARGET_MS ? 'met' : 'MISSED'} (≤ 3 s), ${ours.jsBytes <= JS_TARGET_BYTES ? 'met' : 'MISSED'} (≤ 200 KB)`],
      ['uncompressed (peer)', String(peer.pinMs), String(peer.openMs), String(peer.ms), kb(peer.jsBytes), String(peer.jsFiles), kb(peer.allBytes), '']
    ])
    const cache = precache()
    const load = loadAverage()
    console.log(`service worker precache: ${cache.entries} files, ${kb(cache.raw)} KB as stored, ${kb(cache.brotli)} KB as brotli; load average (1 min) ${load}`)
    mergeResults([
      { name: 'tablet /field time to usable visit form', n: 1, ours_ms: ours.ms, peer: 'same pages uncompressed', peer_ms: peer.ms, ratio: round(ours.ms / peer.ms, 3), peak_rss_mb: null, details: { load_average_1m: load, pin_screen_ms: ours.pinMs, store_open_ms: ours.openMs, peer_pin_screen_ms: peer.pinMs, peer_store_open_ms: peer.openMs } },
      { name: 'tablet /field JS KB on the wire (in ours_ms/peer_ms)', n: 1, ours_ms: round(ours.jsBytes / 1024), peer: 'same pages uncompressed', peer_ms: round(peer.jsBytes / 1024), ratio: round(ours.jsBytes / peer.jsBytes, 3), peak_rss_mb: null },
      { name: 'service worker precache KB brotli (in ours_ms; peer_ms: as stored)', n: cache.entries, ours_ms: round(cache.brotli / 1024), peer: 'the same files as stored', peer_ms: round(cache.raw / 1024), ratio: round(cache.brotli / cache.raw, 3), peak_rss_mb: null }
    ])
  }
  finally {
    await browser.close()
    await stack.stop()
  }
}

main().catch((error) => {
  console.error(error)
  process.exit(1)
})
