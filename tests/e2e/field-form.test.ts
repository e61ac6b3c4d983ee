import path from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Round, Visit } from '../../server/db/models'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext, waitForApp } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { ensurePublished } from '../support/models'
import { DEMO, demoUser, freshClient } from '../support/server'
import { openFieldStore } from '../support/field-pin'

// The tablet form in the order of an interview, as the enumerator sees it on a tablet held upright.
let browser: Browser
const poll = <T>(check: () => T | Promise<T>, timeout = 10_000) => expect.poll(check, { timeout })

beforeAll(async () => {
  testDatabase()
  const round = await Round.findOne({ order: [['id', 'ASC']] })
  const coordinator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  const runId = await ensurePublished(coordinator, round!.id)
  // The planning aid switched on, so the test can see where it appears and where it does not.
  expect((await coordinator.post(`/api/models/${runId}/publish`, { note: 'Planning aid on', tabletAid: true, targetRate: 0.3 })).status).toBe(200)
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

async function openTablet() {
  const context = await newTabletContext(browser)
  const page = await context.newPage()
  await page.setViewportSize({ width: 820, height: 1180 })
  const errors: string[] = []
  page.on('console', m => m.type() === 'error' && !/Failed to load resource/.test(m.text()) && errors.push(m.text()))
  page.on('pageerror', e => errors.push(e.message))
  await page.goto('/signin?next=/field')
  await waitForApp(page)
  await page.getByLabel('E-mail').fill(demoUser('enumerator').email)
  await page.getByLabel('Password').fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === '/field')
  await openFieldStore(page)
  await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
  return { context, page, errors }
}

const localVisits = (page: Page) => page.getByTestId('local-visit').count()

describe('the tablet form in the order of a real interview', () => {
  it('asks for consent first, makes no draft until something is entered, and lets a draft be discarded', async () => {
    const { context, page, errors } = await openTablet()
    const before = await localVisits(page)
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.waitForURL(/\/field\/visit\?round=/)
    // Before consent nothing else can be entered, and the screen says why.
    await poll(() => page.getByTestId('consent-first').textContent()).toContain('The questions open once consent is recorded')
    expect(await page.getByLabel('Farm code *').isDisabled()).toBe(true)
    expect(await page.locator('#q-farm_size_ha').isDisabled()).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-form-consent-first.png'), fullPage: true })
    // Leaving an untouched form leaves nothing behind, and the way out says so.
    expect(await page.getByRole('button', { name: 'Discard this draft' }).count()).toBe(0)
    await page.getByRole('link', { name: 'Back', exact: true }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await openFieldStore(page)
    await poll(() => localVisits(page)).toBe(before)

    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await page.getByLabel('Farm code *').fill('DISCARD-ME')
    await page.getByRole('link', { name: 'Keep as draft' }).click()
    await poll(() => page.getByTestId('local-visit').filter({ hasText: 'DISCARD-ME' }).count()).toBe(1)
    await page.getByTestId('local-visit').filter({ hasText: 'DISCARD-ME' }).getByRole('link').click()
    await page.getByRole('button', { name: 'Discard this draft' }).click()
    await page.getByRole('button', { name: 'Yes, discard the draft' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await openFieldStore(page)
    await poll(() => page.getByTestId('local-visit').filter({ hasText: 'DISCARD-ME' }).count()).toBe(0)
    expect(errors).toEqual([])
    await context.close()
  })

  it('lists every problem at the top on a failed save, takes typed coordinates, confirms "Saved" and only then shows the planning aid', async () => {
    const { context, page, errors } = await openTablet()
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await page.getByRole('button', { name: 'Save visit' }).click()
    const summary = page.getByTestId('error-summary')
    await poll(() => summary.textContent()).toMatch(/things to fix before this visit can be saved/)
    const text = await summary.innerText()
    expect(text).toContain('Farm code: Enter the farm code')
    expect(text).toMatch(/Position of the farm:/)
    // The summary is at the top of the page, where the eye is after pressing save.
    const box = await summary.boundingBox()
    expect(box!.y).toBeLessThan(400)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-form-error-summary.png') })

    const code = `TYPED-${Date.now().toString(36).toUpperCase()}`
    await page.getByLabel('Farm code *').fill(code)
    await page.getByRole('button', { name: 'No fix: type the position' }).click()
    await page.getByLabel(/Why there is no GPS fix/).fill('Thick cloud over the valley')
    await page.getByLabel(/Latitude/).fill('-13,0921')
    await page.getByLabel(/Longitude/).fill('31.4507')
    const numbers: Record<string, string> = { farm_size_ha: '2.4', household_size: '6', schooling_years: '7', age_head: '41', dealer_distance_km: '8.5', livestock_tlu: '1.2' }
    const yesno: Record<string, boolean> = { adopted: true, female_head: false, extension_contact: true, credit_access: false, group_member: true, owns_phone: true }
    for (const [key, value] of Object.entries(numbers)) await page.locator(`#q-${key}`).fill(value)
    for (const [key, value] of Object.entries(yesno)) await page.locator(`input[name="q-${key}"][value="${value}"]`).check({ force: true })
    expect(await page.getByTestId('planning-aid').count()).toBe(0)
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    await poll(() => page.getByTestId('planning-aid').getAttribute('data-probability')).toMatch(/^0\.\d+/)
    expect(await page.getByTestId('planning-aid').innerText()).toMatch(/expects a farm like this to adopt with probability \d+ %/)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-form-saved.png'), fullPage: true })

    // Synced, the visit opens as a record to read, with the typed position.
    await poll(async () => (await Visit.findOne({ where: { farmCode: code } }))?.lat ?? null, 20_000).toBeCloseTo(-13.0921, 6)
    await page.getByRole('link', { name: 'Back to field work' }).click()
    const row = page.getByTestId('local-visit').filter({ hasText: code })
    // The server has the visit; a sync pass (as the enumerator's button starts one) brings its confirmation back.
    await page.getByRole('button', { name: 'Sync now' }).click()
    await poll(() => row.getAttribute('data-state'), 30_000).toBe('synced')
    await row.getByRole('link').click()
    const readOnly = page.getByTestId('visit-read-only')
    await poll(() => readOnly.innerText()).toContain('It can no longer be changed on this tablet')
    expect(await readOnly.innerText()).toContain('-13.0921, 31.4507 (typed or picked on the map, not GPS)')
    expect(await page.locator('form input').count()).toBe(0)
    expect(await page.getByRole('button', { name: 'Save visit' }).count()).toBe(0)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-form-synced.png'), fullPage: true })
    expect(errors).toEqual([])
    await context.close()
  })

  it('says plainly when the tablet is offline', async () => {
    const { context, page } = await openTablet()
    expect(await page.getByTestId('offline-banner').count()).toBe(0)
    await context.setOffline(true)
    await poll(() => page.getByTestId('offline-banner').innerText()).toMatch(/Offline\.\s+Keep working/)
    const banner = await page.getByTestId('offline-banner').boundingBox()
    expect(banner!.y).toBeLessThan(300)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-offline-banner.png') })
    await context.setOffline(false)
    await poll(() => page.getByTestId('offline-banner').count()).toBe(0)
    await context.close()
  })
})
