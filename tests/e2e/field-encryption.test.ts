import path from 'node:path'
import type { BrowserContext, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { User } from '../../server/db/models'
import type { DeviceRow } from '../../shared/types/field-device'
import { SCREENSHOTS, newTabletContext, waitForApp } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound } from '../support/field'
import { TEST_PIN, openFieldStore } from '../support/field-pin'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'
import { poll, useBrowser } from '../support/pages'
import { DEMO } from '../support/server'

// The tablet's store encrypted at rest, as a thief holding the tablet would meet it: after locking, IndexedDB read
// raw holds no farm code, name, answer or photo bytes; the PIN opens it offline; wrong PINs wait longer each time;
// signing out keeps unsynced visits sealed; a tablet an admin withdrew erases its copy at its next contact.
// Its own organisation: withdrawing the tablet signs its enumerator out everywhere.

const opened = useBrowser()
let org: TestOrganisation
let round: TestRound
let email: string
const FARM = `ENC-${Date.now().toString(36).toUpperCase()}`
const HEAD = 'Nkechi Abernathy-Oduya'
const FARM_SIZE = '7.35'

beforeAll(async () => {
  testDatabase()
  org = await makeOrganisation('Lantern Valley Growers')
  round = await makeRound(org.coordinator, org.enumeratorId, [{ key: 'head_name', label: 'Name of the household head', type: 'text', maxLength: 120 }])
  email = (await User.findByPk(org.enumeratorId))!.email
})
afterAll(closeTestDatabase)

/** Every value of every store of the person's field database, read with the raw IndexedDB API; bytes as Latin-1. */
async function rawStore(page: Page): Promise<{ text: string, counts: Record<string, number>, exists: boolean }> {
  return page.evaluate(async (name) => {
    if (!(await indexedDB.databases()).some(d => d.name === name)) return { text: '', counts: {}, exists: false }
    const db = await new Promise<IDBDatabase>((resolve, reject) => {
      const open = indexedDB.open(name)
      open.onsuccess = () => resolve(open.result)
      open.onerror = () => reject(open.error)
    })
    const latin1 = (bytes: Uint8Array) => {
      let s = ''
      for (const b of bytes) s += String.fromCharCode(b)
      return s
    }
    async function serialise(value: unknown): Promise<unknown> {
      if (value instanceof Blob) return `blob:${latin1(new Uint8Array(await value.arrayBuffer()))}`
      if (value instanceof ArrayBuffer) return `bytes:${latin1(new Uint8Array(value))}`
      if (ArrayBuffer.isView(value)) return `bytes:${latin1(new Uint8Array(value.buffer, value.byteOffset, value.byteLength))}`
      if (Array.isArray(value)) return Promise.all(value.map(serialise))
      if (value && typeof value === 'object') return Object.fromEntries(await Promise.all(Object.entries(value).map(async ([k, v]) => [k, await serialise(v)])))
      return value
    }
    const counts: Record<string, number> = {}
    const parts: unknown[] = []
    for (const store of [...db.objectStoreNames]) {
      const rows = await new Promise<unknown[]>((resolve, reject) => {
        const request = db.transaction(store).objectStore(store).getAll()
        request.onsuccess = () => resolve(request.result)
        request.onerror = () => reject(request.error)
      })
      counts[store] = rows.length
      parts.push(await serialise(rows))
    }
    db.close()
    return { text: JSON.stringify(parts), counts, exists: true }
  }, `furrowcast-field-${org.enumeratorId}`)
}

async function signIn(page: Page) {
  await page.goto('/signin?next=/field')
  await waitForApp(page)
  await page.getByLabel('E-mail').fill(email)
  await page.getByLabel('Password').fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === '/field')
}

async function typePin(page: Page, pin: string) {
  await page.getByLabel('PIN', { exact: true }).fill(pin)
  await page.getByRole('button', { name: 'Unlock' }).click()
}

describe('the field app opened as a document', () => {
  it('asks the server for the session once: the document\'s preload answers the app\'s own request', async () => {
    const context = await newTabletContext(opened.browser)
    try {
      // Signed in through the route, so /field is the first document of this browser (as a tablet reopening the app).
      expect((await context.request.post('/api/auth/signin', { data: { email, password: DEMO.password } })).ok()).toBe(true)
      const page = await context.newPage()
      const asked: Array<Promise<string | undefined>> = []
      page.on('request', (r) => {
        if (new URL(r.url()).pathname === '/api/_auth/session') asked.push(r.allHeaders().then(h => h.accept))
      })
      await page.goto('/field')
      await page.getByTestId('field-pin-setup').waitFor()
      expect(await page.getByRole('heading', { level: 1 }).textContent()).toMatch(/PIN/)
      // One request, and it is the preload's (a browser's preload asks for any type; the app's own asks for JSON).
      expect(await Promise.all(asked)).toEqual(['*/*'])
    }
    finally {
      await context.close()
    }
  })
})

describe('the tablet\'s encrypted store', () => {
  let context: BrowserContext
  let page: Page

  it('asks for a PIN after the first sign-in, records a visit with a name and a photo, and after locking holds nothing readable', async () => {
    context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: round.centre.lat, longitude: round.centre.lon, accuracy: 5 })
    page = await context.newPage()
    await signIn(page)
    await poll(() => page.getByTestId('field-pin-setup').isVisible()).toBe(true)
    // A visit the app stored in clear before encryption existed, put straight into the store the app opened.
    await poll(() => page.evaluate(async name => (await indexedDB.databases()).some(d => d.name === name), `furrowcast-field-${org.enumeratorId}`)).toBe(true)
    await page.evaluate(async ({ name, code, roundId }) => {
      const db = await new Promise<IDBDatabase>((resolve, reject) => {
        const open = indexedDB.open(name)
        open.onsuccess = () => resolve(open.result)
        open.onerror = () => reject(open.error)
      })
      const now = new Date().toISOString()
      const tx = db.transaction('visits', 'readwrite')
      tx.objectStore('visits').put({ id: crypto.randomUUID(), roundId, villageId: null, questionnaireVersionId: 1, farmCode: code, location: null, answers: { head_name: 'Older Entry Person' }, consent: true, consentAt: now, startedAt: now, savedAt: now, baseVersion: 1, state: 'synced', reviewState: 'accepted', reviewReason: null, errors: null, serverCopy: null, updatedAt: now, syncedAt: now })
      await new Promise(resolve => (tx.oncomplete = resolve))
      db.close()
    }, { name: `furrowcast-field-${org.enumeratorId}`, code: `${FARM}-OLD`, roundId: round.roundId })
    // A PIN too easy to guess is refused on screen.
    await page.getByLabel('PIN', { exact: true }).fill('111111')
    await page.getByLabel('The same PIN again').fill('111111')
    await page.getByRole('button', { name: 'Set the PIN' }).click()
    await poll(() => page.locator('#pin-again-error').textContent()).toContain('harder to guess')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-pin-setup.png'), fullPage: true })
    await openFieldStore(page)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)
    await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
    // The clear record was sealed on the first unlock, and still reads in the app.
    await poll(() => page.getByTestId('local-visit').filter({ hasText: `${FARM}-OLD` }).count()).toBe(1)
    const migrated = await rawStore(page)
    expect(migrated.counts.visits).toBe(1)
    expect(migrated.text).not.toContain(`${FARM}-OLD`)
    expect(migrated.text).not.toContain('Older Entry Person')

    // Offline from here: the visit and its photo stay on the tablet, waiting.
    await context.setOffline(true)
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await page.getByLabel('Farm code *').fill(FARM)
    await page.getByRole('button', { name: 'Record GPS position' }).click()
    await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
    await page.locator('#q-farm_size_ha').fill(FARM_SIZE)
    await page.locator('#q-household_size').fill('9')
    await page.locator('#q-head_name').fill(HEAD)
    await page.locator('input[name="q-adopted"][value="true"]').check({ force: true })
    const photo = Buffer.from(await page.evaluate(() => {
      const canvas = document.createElement('canvas')
      canvas.width = 800
      canvas.height = 600
      const g = canvas.getContext('2d')!
      g.fillStyle = '#6b8f3a'
      g.fillRect(0, 0, 800, 600)
      g.fillStyle = '#c2571a'
      g.fillRect(100, 100, 300, 200)
      return canvas.toDataURL('image/png').split(',')[1]!
    }), 'base64')
    await page.locator('#visit-photos').setInputFiles({ name: 'plot.png', mimeType: 'image/png', buffer: photo })
    await poll(() => page.getByTestId('visit-photo').count()).toBe(1)
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    await page.getByRole('link', { name: 'Back to field work' }).click()
    await poll(() => page.getByTestId('local-visit').filter({ hasText: `${FARM} ·` }).count()).toBe(1)

    await page.getByTestId('field-lock').click()
    await poll(() => page.getByTestId('field-unlock').isVisible()).toBe(true)
    expect(await page.locator('body').innerText()).not.toContain(FARM)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-locked.png'), fullPage: true })

    const raw = await rawStore(page)
    // The records are there (the test reads the real store)…
    expect(raw.counts).toMatchObject({ visits: 2, photos: 1 })
    expect(raw.counts.cache).toBeGreaterThan(0)
    expect(raw.text).toContain('"state":"queued"')
    expect(raw.text.length).toBeGreaterThan(5_000)
    // …and nothing of the farm reads in clear: code, name, answers, village names of the round, photo bytes.
    for (const secret of [FARM, HEAD, 'Nkechi', FARM_SIZE, 'head_name', 'farm_size_ha', 'Test village', 'JFIF', 'image/jpeg']) expect(raw.text, secret).not.toContain(secret)
  }, 180_000)

  it('opens offline with the PIN and shows the visit', async () => {
    await page.reload()
    await poll(() => page.getByTestId('field-unlock').isVisible()).toBe(true)
    await typePin(page, TEST_PIN)
    await poll(() => page.getByTestId('local-visit').filter({ hasText: `${FARM} ·` }).count(), 20_000).toBe(1)
    expect(await page.evaluate(() => navigator.onLine)).toBe(false)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-unlocked-offline.png'), fullPage: true })
  }, 60_000)

  it('slows wrong PINs down step by step, across a reload, and never loses the visit', async () => {
    await page.getByTestId('field-lock').click()
    await typePin(page, '000000')
    await poll(() => page.locator('#pin-unlock-error').textContent()).toBe('That PIN is not right.')
    expect(await page.getByTestId('pin-wait').count()).toBe(0)
    await typePin(page, '000001')
    await poll(() => page.getByTestId('pin-wait').textContent()).toMatch(/2 wrong PINs in a row\. Try again in [45] s/)
    expect(await page.getByRole('button', { name: 'Unlock' }).isDisabled()).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-wrong-pin.png'), fullPage: true })
    // A reload does not reset the wait.
    await page.reload()
    await poll(() => page.getByTestId('pin-wait').textContent()).toMatch(/Try again in [1-5] s/)
    await poll(() => page.getByTestId('pin-wait').count(), 10_000).toBe(0)
    await typePin(page, '000002')
    await poll(() => page.getByTestId('pin-wait').textContent()).toMatch(/3 wrong PINs in a row\. Try again in (9|10) s/)
    await poll(() => page.getByTestId('pin-wait').count(), 15_000).toBe(0)
    await typePin(page, TEST_PIN)
    await poll(() => page.getByTestId('local-visit').filter({ hasText: `${FARM} ·` }).count(), 20_000).toBe(1)
  }, 90_000)

  it('warns before signing out with an unsynced visit, and keeps it sealed for the next sign-in', async () => {
    // Back online, but the server answers "busy", so the visit stays on the tablet unsent.
    await page.route('**/api/sync/visits', route => route.request().method() === 'POST' ? route.fulfill({ status: 503, headers: { 'retry-after': '120' }, body: '{}' }) : route.continue())
    await context.setOffline(false)
    await page.getByRole('button', { name: 'Sign out' }).click()
    const dialog = page.getByTestId('confirm-dialog')
    await poll(() => dialog.isVisible()).toBe(true)
    expect(await dialog.innerText()).toContain('1 visit on this tablet has not reached the server')
    expect(await dialog.innerText()).toContain('encrypted')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-signout-warning.png'), fullPage: true })
    await page.getByRole('button', { name: 'Sign out and keep them' }).click()
    await page.waitForURL(url => url.pathname === '/signin')
    const raw = await rawStore(page)
    expect(raw.counts).toMatchObject({ visits: 2, photos: 1 })
    expect(raw.text).not.toContain(FARM)
    await signIn(page)
    await poll(() => page.getByTestId('field-unlock').isVisible()).toBe(true)
    await typePin(page, TEST_PIN)
    await poll(() => page.getByTestId('local-visit').filter({ hasText: `${FARM} ·` }).count(), 20_000).toBe(1)
  }, 90_000)

  it('replaces a forgotten PIN only online and signed in, through the server\'s spare key', async () => {
    await page.getByTestId('field-lock').click()
    await page.getByText('Forgot your PIN?').click()
    await context.setOffline(true)
    await page.getByLabel('New PIN (at least 6)').fill('739164')
    await page.getByLabel('The same PIN again').fill('739164')
    await page.getByRole('button', { name: 'Choose the new PIN' }).click()
    await poll(() => page.locator('#pin-replace-again-error').textContent()).toContain('cannot be reached')
    await context.setOffline(false)
    await page.getByRole('button', { name: 'Choose the new PIN' }).click()
    await poll(() => page.getByTestId('local-visit').filter({ hasText: `${FARM} ·` }).count(), 20_000).toBe(1)
    // The old PIN no longer opens the store; the new one does.
    await page.getByTestId('field-lock').click()
    await typePin(page, TEST_PIN)
    await poll(() => page.locator('#pin-unlock-error').textContent()).toBe('That PIN is not right.')
    await typePin(page, '739164')
    await poll(() => page.getByTestId('local-visit').filter({ hasText: `${FARM} ·` }).count(), 20_000).toBe(1)
  }, 60_000)

  it('erases its copy at the next contact once an admin withdrew it on the people page', async () => {
    const adminContext = await newTabletContext(opened.browser)
    const admin = await adminContext.newPage()
    const list = await org.admin.get<{ devices: DeviceRow[] }>('/api/devices')
    const mine = list.body.devices.filter(d => d.personId === org.enumeratorId)
    expect(mine).toHaveLength(1)
    const adminEmail = (await User.findOne({ where: { organisationId: org.id, role: 'admin' } }))!.email
    await admin.goto('/signin?next=/people')
    await waitForApp(admin)
    await admin.getByLabel('E-mail').fill(adminEmail)
    await admin.getByLabel('Password').fill(DEMO.password)
    await admin.getByRole('button', { name: 'Sign in' }).click()
    await admin.waitForURL(url => url.pathname === '/people')
    const row = admin.getByTestId('device-row').filter({ hasText: 'Wanjiru Osterhout' })
    await poll(() => row.count(), 15_000).toBe(1)
    await admin.screenshot({ path: path.join(SCREENSHOTS, 'people-tablets.png'), fullPage: true })
    await row.getByRole('button', { name: 'Withdraw' }).click()
    await poll(() => admin.getByTestId('confirm-dialog').innerText()).toContain('erases the visits')
    await admin.getByRole('button', { name: 'Withdraw the tablet' }).click()
    await poll(() => admin.getByTestId('devices-notice').textContent()).toContain('is withdrawn')
    await poll(() => row.innerText()).toContain('Withdrawn')
    await adminContext.close()

    // The tablet's next contact (the app opened again): its owner was signed out by the withdrawal, yet the app
    // asks with its own token, hears "revoked" and erases the store before anyone signs in.
    await page.goto('/field')
    await page.waitForURL(url => url.pathname === '/signin')
    await poll(async () => {
      const raw = await rawStore(page)
      return raw.exists ? Object.values(raw.counts).reduce((a, b) => a + b, 0) : 0
    }, 20_000).toBe(0)
    expect((await rawStore(page)).text).not.toContain(FARM)
    expect(await page.evaluate(id => localStorage.getItem(`furrowcast:field-vault:${id}`), org.enumeratorId)).toBeNull()
    // Signed in again, the owner is told why the tablet is empty.
    await page.getByLabel('E-mail').fill(email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await poll(() => page.getByTestId('field-erased').isVisible(), 20_000).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-withdrawn.png'), fullPage: true })
    // Set up again, the tablet locks by itself after five minutes without a touch or key (the page's clock run ahead).
    await page.clock.install()
    await page.getByRole('button', { name: 'Set this tablet up again' }).click()
    await openFieldStore(page)
    await page.clock.fastForward('04:00')
    expect(await page.getByTestId('field-lock').isVisible()).toBe(true)
    await page.clock.fastForward('01:30')
    await poll(() => page.getByTestId('field-unlock').isVisible()).toBe(true)
    await context.close()
  }, 120_000)
})
