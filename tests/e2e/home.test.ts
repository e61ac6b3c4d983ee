import path from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Publication, Round, User, Visit } from '../../server/db/models'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { ensurePublished } from '../support/models'
import { openFieldStore } from '../support/field-pin'
import { DEMO, demoUser, freshClient } from '../support/server'

// Each role's home page shows figures read from the database (or, for the enumerator, from the tablet's store).
let browser: Browser
let roundId = 0

beforeAll(async () => {
  testDatabase()
  roundId = (await Round.findOne({ order: [['id', 'ASC']] }))!.id
  const coordinator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  await ensurePublished(coordinator, roundId)
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

/** Signs in as a demo role and opens the home page, collecting console errors of every page visited. */
async function homeOf(role: string, viewport?: { width: number, height: number }) {
  const context = await newTabletContext(browser)
  const page = await context.newPage()
  if (viewport) await page.setViewportSize(viewport)
  const errors: string[] = []
  page.on('console', m => m.type() === 'error' && errors.push(m.text()))
  page.on('pageerror', e => errors.push(e.message))
  await page.goto('/signin?next=/')
  await page.getByLabel('E-mail').fill(demoUser(role).email)
  await page.getByLabel('Password').fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === '/')
  return { context, page, errors }
}

const text = (page: Page, testId: string) => page.getByTestId(testId).first().innerText()

describe('home pages with real figures', () => {
  it('shows the coordinator the round in progress with its visits, the visits to review, the fits and what is published', async () => {
    const { context, page, errors } = await homeOf('coordinator')
    const visits = await Visit.count({ where: { roundId } })
    const toReview = await Visit.count({ where: { roundId, reviewState: 'received' } })
    const round = await Round.findByPk(roundId)
    const card = page.getByTestId('home-round').filter({ hasText: round!.name })
    await expect.poll(() => card.count(), { timeout: 20_000 }).toBe(1)
    const shown = await card.innerText()
    expect(shown).toContain(`Visits received\n${visits.toLocaleString('en-GB')}`)
    expect(shown).toContain(`Waiting for review\n${toReview.toLocaleString('en-GB')}`)
    expect(await page.getByText('No survey round yet').count()).toBe(0)
    const published = await Publication.findOne({ where: { roundId, active: true } })
    expect(await text(page, 'home-published')).toContain(`${round!.name}: ${(published!.content.overall.estimate * 100).toFixed(1)} % predicted adoption`)
    expect(await page.getByTestId('home-fit').filter({ hasText: 'published' }).count()).toBeGreaterThanOrEqual(1)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'home-coordinator.png'), fullPage: true })
    await page.getByTestId('home-published').first().getByRole('link').click()
    await page.waitForURL(/\/overview\?round=/)
    expect(errors).toEqual([])
    await context.close()
  })

  it('names the funder\'s own organisation and shows its published round with the headline figures and a link to the map', async () => {
    const { context, page, errors } = await homeOf('funder', { width: 820, height: 1180 })
    expect(await text(page, 'home-organisation')).toBe(DEMO.funderOrganisation.name.toUpperCase())
    expect(await text(page, 'current-role')).toBe(`Funder · ${DEMO.funderOrganisation.name}`)
    const published = await Publication.findOne({ where: { roundId, active: true } })
    const card = page.getByTestId('home-funder-round')
    expect(await card.count()).toBeGreaterThanOrEqual(1)
    const shown = await card.first().innerText()
    expect(shown).toContain(`Predicted adoption\n${(published!.content.overall.estimate * 100).toFixed(1)} %`)
    expect(shown).toContain(`Farms visited\n${published!.content.farmsVisited.toLocaleString('en-GB')}`)
    expect(await page.getByText('Nothing published yet').count()).toBe(0)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'home-funder.png'), fullPage: true })
    await card.first().getByRole('link', { name: 'Open the village map' }).click()
    await page.waitForURL(new RegExp(`/overview\\?round=${published!.roundId}`))
    expect(errors).toEqual([])
    await context.close()
  })

  it('shows the admin the people by role and the open invitations', async () => {
    const { context, page, errors } = await homeOf('admin')
    const admin = await User.findOne({ where: { email: demoUser('admin').email } })
    const enumerators = await User.count({ where: { organisationId: admin!.organisationId, role: 'enumerator', active: true } })
    expect(await text(page, 'home-people')).toContain(`Enumerators\n${enumerators}`)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'home-admin.png'), fullPage: true })
    expect(errors).toEqual([])
    await context.close()
  })

  it('shows the enumerator what waits on this tablet, read from the tablet\'s own store', async () => {
    const { context, page, errors } = await homeOf('enumerator', { width: 820, height: 1180 })
    const user = await User.findOne({ where: { email: demoUser('enumerator').email } })
    // The figures come from the tablet's encrypted store: opened in field work, then home by the app's own link.
    const homeThroughField = async () => {
      await page.goto('/field')
      await openFieldStore(page)
      await page.getByRole('link', { name: 'Furrowcast' }).click()
      await page.waitForURL(url => url.pathname === '/')
    }
    await homeThroughField()
    await expect.poll(() => text(page, 'home-field'), { timeout: 20_000 }).toContain('Waiting to sync\n0')
    // Let the tablet's first sync pass finish (it records today's date) before the store is changed by hand.
    await expect.poll(() => text(page, 'home-last-sync'), { timeout: 20_000 }).toMatch(/\d{4}, \d{2}:\d{2}/)
    // Two visits put straight into the tablet's store, as the form would leave them: one queued, one sent back.
    await page.evaluate(async (userId) => {
      const open = indexedDB.open(`furrowcast-field-${userId}`)
      const db = await new Promise<IDBDatabase>((resolve, reject) => {
        open.onsuccess = () => resolve(open.result)
        open.onerror = () => reject(open.error)
      })
      const now = new Date().toISOString()
      const base = { roundId: 1, villageId: 1, questionnaireVersionId: 1, location: null, answers: {}, consent: true, consentAt: now, startedAt: now, savedAt: now, baseVersion: 0, reviewState: null, reviewReason: null, errors: null, serverCopy: null, updatedAt: now, syncedAt: null }
      const tx = db.transaction(['visits', 'cache'], 'readwrite')
      tx.objectStore('visits').put({ ...base, id: crypto.randomUUID(), farmCode: 'HOME-1', state: 'queued' })
      tx.objectStore('visits').put({ ...base, id: crypto.randomUUID(), farmCode: 'HOME-2', state: 'sent_back', reviewState: 'sent_back', reviewReason: 'Check the farm size' })
      tx.objectStore('cache').put({ key: 'lastSyncAt', value: '2026-03-04T05:06:00.000Z' })
      await new Promise(resolve => (tx.oncomplete = resolve))
      db.close()
    }, user!.id)
    // The server would refuse these hand-made visits; answering "try later" keeps them waiting on the tablet,
    // as a dead connection would. The browser logs that answer, which is expected here and nothing else is.
    await page.route('**/api/sync/visits', route => route.request().method() === 'POST' ? route.fulfill({ status: 503, headers: { 'retry-after': '60' }, body: '{}' }) : route.continue())
    // Reloaded, the store is locked again: home says so and shows no figures.
    await page.reload()
    await expect.poll(() => text(page, 'home-field-locked')).toContain('locked')
    expect(await text(page, 'home-field')).toContain('Waiting to sync\n…')
    await homeThroughField()
    await expect.poll(() => text(page, 'home-field'), { timeout: 20_000 }).toContain('Waiting to sync\n1')
    expect(await text(page, 'home-field')).toContain('Sent back to fix\n1')
    expect(await text(page, 'home-last-sync')).toMatch(/4 Mar 2026/)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'home-enumerator.png'), fullPage: true })
    expect(errors.filter(e => !/status of 503/.test(e))).toEqual([])
    await context.close()
  })
})
