import { type Server, createServer } from 'node:http'
import type { AddressInfo } from 'node:net'
import path from 'node:path'
import type { Browser } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Round, User } from '../../server/db/models'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { DEMO, baseUrl, demoUser } from '../support/server'

// A page on another origin of the same machine (another port: same site, so the browser still sends the
// SameSite=Lax session cookie) tries to act for a signed-in admin and coordinator. The guard alone stops it.
let browser: Browser
let evil: Server
let evilOrigin: string
const tag = Math.random().toString(36).slice(2, 8)
const emails = ['form', 'plain', 'cors', 'beacon'].map(way => `forged-${way}-${tag}@example.org`)
const roundName = `Forged round ${tag}`

/** The attacker's pages: `/form` submits a form on load, `/` tries fetches and a beacon. */
function attackPage(app: string, form: boolean) {
  if (form) {
    return `<!doctype html><html><body>
<form id="f" method="POST" action="${app}/api/people/invitations">
  <input name="email" value="${emails[0]}"><input name="role" value="admin"><input name="name" value="Forged Person">
</form>
<script>document.getElementById('f').submit()</script></body></html>`
  }
  const invite = (email: string) => JSON.stringify({ email, role: 'admin', name: 'Forged Person' })
  const round = JSON.stringify({ name: roundName, technology: 'Forged technology', season: 'Forged season' })
  // Only built from constants of this test: the page is the attacker's, not the product's.
  return `<!doctype html><html><body>
<script>
window.results = {}
const settle = (key, promise) => promise.then(r => { results[key] = r.type + ' ' + r.status }, e => { results[key] = 'error ' + e.message })
Promise.all([
  settle('plain', fetch('${app}/api/people/invitations', { method: 'POST', mode: 'no-cors', credentials: 'include', headers: { 'content-type': 'text/plain' }, body: ${JSON.stringify(invite(emails[1]!))} })),
  settle('plainRound', fetch('${app}/api/rounds', { method: 'POST', mode: 'no-cors', credentials: 'include', headers: { 'content-type': 'text/plain' }, body: ${JSON.stringify(round)} })),
  settle('cors', fetch('${app}/api/people/invitations', { method: 'POST', credentials: 'include', headers: { 'content-type': 'application/json' }, body: ${JSON.stringify(invite(emails[2]!))} })),
  settle('signOutEverywhere', fetch('${app}/api/me/sessions', { method: 'DELETE', credentials: 'include' })),
  Promise.resolve(navigator.sendBeacon('${app}/api/people/invitations', new Blob([${JSON.stringify(invite(emails[3]!))}], { type: 'text/plain' })))
]).then(() => { window.fetchesDone = true })
</script></body></html>`
}

beforeAll(async () => {
  testDatabase()
  browser = await launchBrowser()
  evil = createServer((req, res) => {
    res.writeHead(200, { 'content-type': 'text/html; charset=utf-8' })
    res.end(attackPage(new URL(baseUrl()).origin, req.url === '/form'))
  })
  await new Promise<void>(resolve => evil.listen(Number(process.env.FURROWCAST_TEST_SECOND_ORIGIN_PORT ?? 0), '127.0.0.1', resolve))
  evilOrigin = `http://127.0.0.1:${(evil.address() as AddressInfo).port}`
})
afterAll(async () => {
  await new Promise(resolve => evil.close(resolve))
  await closeTestDatabase()
  await closeBrowser()
})

describe('a page on another origin', () => {
  it.each(['admin', 'coordinator'])('changes nothing for a signed-in %s: form post, text/plain post, credentialed fetch, beacon', async (role) => {
    const context = await newTabletContext(browser)
    const signIn = await context.request.post('/api/auth/signin', { data: { email: demoUser(role).email, password: DEMO.password } })
    expect(signIn.status()).toBe(200)
    const page = await context.newPage()
    await page.goto(evilOrigin)
    await page.waitForFunction(() => (window as unknown as { fetchesDone?: boolean }).fetchesDone === true)
    const results = await page.evaluate(() => (window as unknown as { results: Record<string, string> }).results)
    // The credentialed CORS fetches never get an answer the page may read.
    expect(results.cors).toMatch(/^error/)
    expect(results.signOutEverywhere).toMatch(/^error/)
    // The auto-submitting form lands on the app, which answers 403.
    const formAnswers: number[] = []
    page.on('response', (r) => {
      if (r.url().endsWith('/api/people/invitations') && r.request().resourceType() === 'document') formAnswers.push(r.status())
    })
    await page.goto(`${evilOrigin}/form`, { waitUntil: 'commit' })
    await expect.poll(() => formAnswers, { timeout: 30_000 }).toEqual([403])
    await page.waitForURL(url => url.origin === new URL(baseUrl()).origin, { waitUntil: 'commit' })
    // For a person to look at; the page is the app's error page, sometimes still drawing on a loaded machine.
    await page.screenshot({ path: path.join(SCREENSHOTS, `cross-site-refused-${role}.png`) }).catch(() => undefined)

    // Nothing changed in MariaDB, and the session is still alive (no forged sign-out everywhere).
    await new Promise(resolve => setTimeout(resolve, 500))
    expect(await User.count({ where: { email: emails } })).toBe(0)
    expect(await Round.count({ where: { name: roundName } })).toBe(0)
    expect((await context.request.get('/api/me')).status()).toBe(200)
    await context.close()
  })
})
