import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { Assignment, Photo, User, Village, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext, waitForApp } from '../support/browser'
import { objectSize } from '../support/object-store'
import { poll, useBrowser } from '../support/pages'
import { DEMO, demoUser, freshClient } from '../support/server'
import { openFieldStore } from '../support/field-pin'

const opened = useBrowser()

// Answers for every question of the demo questionnaire.
const NUMBERS: Record<string, string> = { farm_size_ha: '2.4', household_size: '6', schooling_years: '7', age_head: '41', dealer_distance_km: '8.5', livestock_tlu: '1.2' }
const YESNO: Record<string, boolean> = { adopted: true, female_head: false, extension_contact: true, credit_access: false, group_member: true, owns_phone: true }

async function signInOnTablet(page: Page) {
  await page.goto('/signin?next=/field')
  await waitForApp(page)
  await page.getByLabel('E-mail').fill(demoUser('enumerator').email)
  await page.getByLabel('Password').fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === '/field').catch(async (error) => {
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-signin-failed.png'), fullPage: true })
    throw error
  })
  await openFieldStore(page)
  await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
}

/** After "Save visit": the "Saved" confirmation replaces the form; its link goes back to the list. */
async function backAfterSaved(page: Page) {
  await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
  await page.getByRole('link', { name: 'Back to field work' }).click()
  await page.waitForURL(url => url.pathname === '/field')
  await openFieldStore(page)
}

async function recordVisit(page: Page, farmCode: string, photo?: Buffer) {
  await page.getByRole('link', { name: 'New visit' }).first().click()
  await page.waitForURL(/\/field\/visit\?round=/)
  // Consent comes first: until it is recorded, nothing else of the visit can be entered.
  expect(await page.getByLabel('Farm code *').isDisabled()).toBe(true)
  await page.getByRole('checkbox', { name: /informed consent/ }).check()
  await page.waitForURL(/\/field\/visit\?id=/)
  await page.getByLabel('Farm code *').fill(farmCode)
  await page.getByRole('button', { name: 'Record GPS position' }).click()
  await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
  for (const [key, value] of Object.entries(NUMBERS)) await page.locator(`#q-${key}`).fill(value)
  for (const [key, value] of Object.entries(YESNO)) await page.locator(`input[name="q-${key}"][value="${value}"]`).check({ force: true })
  if (photo) {
    await page.locator('#visit-photos').setInputFiles({ name: 'farm.png', mimeType: 'image/png', buffer: photo })
    await poll(() => page.getByTestId('visit-photo').count()).toBe(1)
  }
  await page.getByRole('button', { name: 'Save visit' }).click()
  await backAfterSaved(page)
}

describe('field capture on a tablet with no network', () => {
  it('opens offline from the service worker, records three visits with a photo, and syncs each exactly once', async () => {
    const enumerator = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const assignments = await Assignment.findAll({ where: { userId: enumerator!.id } })
    const villages = await Village.findAll({ where: { id: assignments.map(a => a.villageId) } })
    const context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: villages[0]!.centreLat, longitude: villages[0]!.centreLon, accuracy: 7 })
    let page = await context.newPage()

    // Online: sign in once; the app fetches the round and installs its service worker.
    await signInOnTablet(page)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)
    const photo = Buffer.from(await page.evaluate(() => {
      const canvas = document.createElement('canvas')
      canvas.width = 1600
      canvas.height = 1200
      const g = canvas.getContext('2d')!
      g.fillStyle = '#3d7a52'
      g.fillRect(0, 0, 1600, 1200)
      g.fillStyle = '#d99a1e'
      g.fillRect(200, 300, 900, 500)
      return canvas.toDataURL('image/png').split(',')[1]!
    }), 'base64')

    // Offline: the reload is answered by the service worker, and the cached round is there.
    await context.setOffline(true)
    await page.reload()
    await openFieldStore(page)
    await poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Field work')
    expect(await page.evaluate(() => navigator.serviceWorker.controller !== null)).toBe(true)
    await poll(() => page.getByTestId('field-village').count()).toBeGreaterThan(0)

    // The form cannot be saved without consent (or a farm code); errors come from the questionnaire's schema.
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(() => page.locator('#farm-code-error').textContent()).toBe('Enter the farm code')
    await poll(() => page.getByTestId('error-summary').innerText()).toContain('Consent: The farmer\'s informed consent is required')
    // Nothing was entered, so nothing was kept: the way out says "Back", not "Keep as draft".
    await page.getByRole('link', { name: 'Back', exact: true }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await openFieldStore(page)

    const tag = Date.now().toString(36).toUpperCase()
    const codes = [1, 2, 3].map(i => `E2E-${tag}-${i}`)
    await recordVisit(page, codes[0]!, photo)
    await recordVisit(page, codes[1]!)
    await recordVisit(page, codes[2]!)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent()).toBe('3')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-offline.png'), fullPage: true })

    // Close the app and open it again, still offline: the queue is on the device.
    await page.close()
    page = await context.newPage()
    await page.goto('/field')
    await openFieldStore(page)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent()).toBe('3')
    expect(await Visit.count({ where: { farmCode: codes } })).toBe(0)

    // Back online: the sync starts by itself and empties the queue.
    await context.setOffline(false)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent(), 30_000).toBe('0')
    await poll(() => page.getByTestId('count-synced').textContent()).toBe('3')
    await poll(() => page.getByTestId('sync-waiting').textContent(), 30_000).toBe('Nothing waiting to sync')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-synced.png'), fullPage: true })

    const stored = await Visit.findAll({ where: { farmCode: codes } })
    expect(stored.map(v => v.farmCode).sort()).toEqual(codes)
    expect(stored.every(v => v.enumeratorId === enumerator!.id && v.reviewState === 'received' && v.accuracyM === 7)).toBe(true)
    const first = stored.find(v => v.farmCode === codes[0])!
    expect(first.answers).toMatchObject({ adopted: true, farm_size_ha: 2.4, household_size: 6, female_head: false })
    const photos = await Photo.findAll({ where: { visitId: stored.map(v => v.id) } })
    expect(photos).toHaveLength(1)
    expect(photos[0]).toMatchObject({ visitId: first.id, status: 'stored', contentType: 'image/jpeg' })
    expect(await objectSize(photos[0]!.objectKey)).toBe(photos[0]!.sizeBytes)

    // A coordinator sends one back with a reason: the tablet shows it, the enumerator fixes and resends it.
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const second = stored.find(v => v.farmCode === codes[1])!
    expect((await coordinator.post(`/api/review/visits/${second.id}`, { action: 'send_back', reason: 'Check the household size with the farmer' })).status).toBe(200)
    await page.getByRole('button', { name: 'Sync now' }).click()
    await poll(() => page.getByTestId('count-sent-back').textContent(), 20_000).toBe('1')
    await page.locator('[data-testid="local-visit"][data-state="sent_back"]').getByRole('link').click()
    await poll(() => page.getByText('Check the household size with the farmer').count()).toBe(1)
    await page.locator('#q-household_size').fill('8')
    await page.getByRole('button', { name: 'Save visit' }).click()
    await backAfterSaved(page)
    await poll(() => page.getByTestId('count-synced').textContent(), 20_000).toBe('3')
    await poll(async () => (await Visit.findByPk(second.id))!.reviewState).toBe('received')
    expect((await Visit.findByPk(second.id))!.answers).toMatchObject({ household_size: 8 })
    expect(await Visit.count({ where: { farmCode: codes } })).toBe(3)
    await context.close()
  }, 180_000)

  it('shows both copies when a coordinator corrected a visit the tablet was editing, and lets the server copy win', async () => {
    const context = await newTabletContext(opened.browser)
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: -13.4, longitude: 31.9, accuracy: 9 })
    const page = await context.newPage()
    await signInOnTablet(page)
    const code = `E2E-CONFLICT-${Date.now().toString(36).toUpperCase()}`
    await recordVisit(page, code)
    await poll(() => page.getByTestId('count-synced').textContent(), 20_000).toBe('1')
    const visit = (await Visit.findOne({ where: { farmCode: code } }))!
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    await coordinator.post(`/api/review/visits/${visit.id}`, { action: 'send_back', reason: 'Ask again about livestock' })
    await page.getByRole('button', { name: 'Sync now' }).click()
    await poll(() => page.getByTestId('count-sent-back').textContent(), 20_000).toBe('1')

    // Offline, the enumerator edits; meanwhile the coordinator corrects the same visit on the server.
    await context.setOffline(true)
    await page.locator('[data-testid="local-visit"][data-state="sent_back"]').getByRole('link').click()
    await page.locator('#q-livestock_tlu').fill('2.5')
    await page.getByRole('button', { name: 'Save visit' }).click()
    await backAfterSaved(page)
    expect((await coordinator.post(`/api/review/visits/${visit.id}`, { action: 'correct', answers: { farm_size_ha: 3.3 }, reason: 'Confirmed by phone' })).status).toBe(200)
    await context.setOffline(false)
    await poll(() => page.locator('[data-testid="local-visit"][data-state="conflict"]').count(), 30_000).toBe(1)

    await page.locator('[data-testid="local-visit"][data-state="conflict"]').getByRole('link').click()
    const conflict = page.getByTestId('visit-conflict')
    await poll(() => conflict.textContent()).toContain('Changed on the server')
    const farmRow = conflict.locator('tr', { hasText: 'Farm size' })
    expect((await farmRow.locator('td').allTextContents()).map(t => t.trim())).toEqual(['Farm size', '2.4', '3.3'])
    const livestockRow = conflict.locator('tr', { hasText: 'Livestock owned' })
    expect((await livestockRow.locator('td').allTextContents()).map(t => t.trim())).toEqual(['Livestock owned', '2.5', '1.2'])
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-conflict.png'), fullPage: true })
    await page.getByRole('button', { name: 'Keep the server\'s version' }).click()
    await poll(() => page.locator('#q-farm_size_ha').inputValue()).toBe('3.3')
    expect((await Visit.findByPk(visit.id))!.answers).toMatchObject({ farm_size_ha: 3.3, livestock_tlu: 1.2 })
    await context.close()
  }, 120_000)
})
