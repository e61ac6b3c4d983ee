import path from 'node:path'
import { randomUUID } from 'node:crypto'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Round, User, Visit } from '../../server/db/models'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext, waitForApp } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type TestRound, makeRound, makeVisit } from '../support/field'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'
import { DEMO } from '../support/server'

// The pages of farmers' personal data as their users see them: the coordinator erases a farm through the
// confirmation dialog; the admin sets retention periods, sees what comes next, and purges what is due.
let browser: Browser
let org: TestOrganisation
let round: TestRound
const poll = <T>(check: () => T | Promise<T>, timeout = 15_000) => expect.poll(check, { timeout })
const dialog = (page: Page) => page.getByTestId('confirm-dialog')

beforeAll(async () => {
  testDatabase()
  browser = await launchBrowser()
  org = await makeOrganisation('Lark Meadow Growers')
  round = await makeRound(org.coordinator, org.enumeratorId)
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

async function signedIn(userId: number, next: string) {
  const context = await newTabletContext(browser)
  const page = await context.newPage()
  await page.goto(`/signin?next=${encodeURIComponent(next)}`)
  await waitForApp(page)
  await page.getByLabel('E-mail').fill((await User.findByPk(userId))!.email)
  await page.getByLabel('Password', { exact: true }).fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === next)
  await waitForApp(page)
  return { context, page }
}

const userOf = async (role: string) => (await User.findOne({ where: { organisationId: org.id, role } }))!.id

describe('the farmers\' data page', () => {
  it('finds a farm, says where its data lives, asks to confirm, and erases it', async () => {
    const farm = `LM-${randomUUID().slice(0, 6)}`
    const visit = makeVisit(round, { farmCode: farm })
    expect((await org.enumerator.post('/api/sync/visits', { visits: [visit] })).status).toBe(200)
    const { context, page } = await signedIn(await userOf('coordinator'), '/privacy')
    await expect(page.getByRole('heading', { name: 'What is protected, and how' }).isVisible()).resolves.toBe(true)
    await page.getByLabel('Farm code').fill(farm)
    await page.getByRole('button', { name: 'Find the farm\'s data' }).click()
    const footprint = page.getByTestId('farm-footprint')
    await poll(() => footprint.textContent()).toContain(`Farm ${farm}: 1 visit, 0 photos`)
    await page.getByRole('button', { name: 'Erase this farm\'s personal data' }).click()
    // Without a reason: said on the screen, nothing asked, nothing erased.
    await poll(() => footprint.textContent()).toContain('Say why')
    expect(await dialog(page).isVisible()).toBe(false)
    await page.getByLabel('Reason (kept in the audit log)').fill('The farmer withdrew consent by letter')
    await page.getByRole('button', { name: 'Erase this farm\'s personal data' }).click()
    await poll(() => dialog(page).isVisible()).toBe(true)
    expect(await dialog(page).textContent()).toContain('This cannot be undone')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'privacy-erase-confirm.png'), fullPage: true })
    await dialog(page).getByRole('button', { name: 'Erase the personal data' }).click()
    const done = page.getByTestId('erasure-done')
    await poll(() => done.textContent()).toMatch(/Erased: 1 visit and 0 photos\. Its visits were deleted; the audit log records the erasure as E-[0-9a-f]{12}\./)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'privacy-erased.png'), fullPage: true })
    expect(await Visit.findByPk(visit.id)).toBeNull()

    // The round page offers the pseudonymised download, and the identifying one only once a reason is given.
    await page.goto(`/rounds/${round.roundId}?part=progress`)
    await waitForApp(page)
    const analysts = page.getByRole('link', { name: 'Download for analysts (zip)' })
    await poll(() => analysts.getAttribute('href')).toBe(`/api/rounds/${round.roundId}/export?part=all&precision=2`)
    await page.getByLabel('Positions', { exact: true }).selectOption('1')
    await poll(() => analysts.getAttribute('href')).toContain('precision=1')
    await page.getByText('With farm codes and exact positions').click()
    const identifying = page.getByRole('link', { name: 'Download with farm codes (zip)' })
    expect(await identifying.count()).toBe(0)
    await page.getByLabel('Why you need farm codes and exact positions').fill('Revisit list for the dry-season follow-up')
    await poll(() => identifying.getAttribute('href')).toContain('identifying=1&reason=Revisit+list')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'round-export-panel.png'), fullPage: true })
    await context.close()
  })
})

describe('the settings page\'s personal data rules', () => {
  it('saves retention periods, shows what is purged next, and purges what is due after a confirmation', async () => {
    const visit = makeVisit(round)
    expect((await org.enumerator.post('/api/sync/visits', { visits: [visit] })).status).toBe(200)
    expect((await org.coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'closed' })).status).toBe(200)
    await Round.update({ closedAt: new Date(Date.now() - 10 * 24 * 3600 * 1000) }, { where: { id: round.roundId } })
    const { context, page } = await signedIn(await userOf('admin'), '/settings')
    const next = page.getByTestId('retention-next')
    // Fill the form only once the stored rules have arrived (they would replace what was typed before).
    await poll(() => next.textContent()).toContain('The server checks every 60 minutes')
    await page.getByLabel('GPS points and typed positions').fill('7')
    await page.getByLabel('Farm codes, names and free-text answers').fill('-3')
    await page.getByRole('button', { name: 'Save the personal data rules' }).click()
    await poll(() => page.locator('#retention-names-error').textContent()).toContain('0 or more')
    await page.getByLabel('Farm codes, names and free-text answers').fill('')
    await page.getByRole('button', { name: 'Save the personal data rules' }).click()
    await poll(() => page.getByTestId('privacy-message').textContent()).toBe('Personal data rules saved.')
    await poll(() => next.textContent()).toContain('(due now)')
    expect(await next.textContent()).toContain(`${(await Round.findByPk(round.roundId))!.name}, 1 × gps points and typed positions`)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'settings-privacy.png'), fullPage: true })
    await page.getByRole('button', { name: 'Purge what is due now' }).click()
    await poll(() => dialog(page).isVisible()).toBe(true)
    await dialog(page).getByRole('button', { name: 'Purge now' }).click()
    await poll(() => page.getByTestId('retention-last').textContent()).toContain('1 × gps points and typed positions')
    expect(await next.textContent()).toContain('Nothing is scheduled')
    expect((await Visit.findByPk(visit.id))!.lat).toBeNull()
    await page.screenshot({ path: path.join(SCREENSHOTS, 'settings-privacy-purged.png'), fullPage: true })
    await context.close()
  })
})
