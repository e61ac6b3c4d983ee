import path from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Round, User } from '../../server/db/models'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext, waitForApp } from '../support/browser'
import { watchConsole } from '../support/console'
import { closeTestDatabase, testDatabase } from '../support/database'
import { makeRound, makeVisit } from '../support/field'
import { DEMO, baseUrl, demoUser, freshClient } from '../support/server'

let browser: Browser
const poll = <T>(check: () => T | Promise<T>, timeout = 10_000) => expect.poll(check, { timeout })

beforeAll(async () => {
  baseUrl()
  testDatabase()
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

async function signIn(page: Page, email: string, next: string) {
  await page.goto(`/signin?next=${encodeURIComponent(next)}`)
  await waitForApp(page)
  await page.getByLabel('E-mail').fill(email)
  await page.getByLabel('Password', { exact: true }).fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === next.split('?')[0])
  await waitForApp(page)
}

const dialog = (page: Page) => page.getByTestId('confirm-dialog')

describe('rounds that do not trap anyone', () => {
  it('lists rounds in one sortable table, copies a questionnaire, and opens, closes and reopens a round after asking', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    const problems = watchConsole(page)
    await signIn(page, demoUser('coordinator').email, '/rounds')

    // The rounds table: the demo round is listed; sorting by visits is a button a keyboard reaches.
    await poll(() => page.getByTestId('round-row').count()).toBeGreaterThan(0)
    const visitsHeader = page.getByRole('columnheader', { name: /Visits/ })
    await visitsHeader.getByRole('button').focus()
    await page.keyboard.press('Enter')
    await poll(() => visitsHeader.getAttribute('aria-sort')).toBe('ascending')
    await page.keyboard.press('Enter')
    await poll(() => visitsHeader.getAttribute('aria-sort')).toBe('descending')
    const demoRound = await Round.findOne({ order: [['id', 'ASC']] })
    await poll(() => page.getByTestId('round-row').first().textContent()).toContain(demoRound!.name)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'rounds-list.png'), fullPage: true })

    // A new round from a copy of the demo round's questionnaire.
    const name = `Copied round ${Date.now().toString(36)}`
    await page.getByLabel('Name').fill(name)
    await page.getByLabel('Technology').fill('drip irrigation kits')
    await page.getByLabel('Season').fill('short rains 2027')
    const copyChoices = await page.getByLabel('Questionnaire to start from').locator('option').allTextContents()
    await page.getByLabel('Questionnaire to start from').selectOption({ label: copyChoices.find(o => o.includes(demoRound!.name))!.trim() })
    await page.getByRole('button', { name: 'Create round' }).click()
    await page.waitForURL(/\/rounds\/\d+/)
    await poll(() => page.getByTestId('builder-question').count()).toBeGreaterThan(5)
    await poll(() => page.locator('main').textContent()).toContain('drip irrigation kits')
    const created = await Round.findOne({ where: { name } })

    // The page is split: only one part at a time, so nothing needs a long scroll.
    const height = await page.evaluate(() => document.documentElement.scrollHeight)
    // (The copied demo questionnaire has 14 questions, one with its condition shown, and a check across answers.)
    expect(height).toBeLessThan(9800)

    // Opening asks first; cancelling changes nothing.
    await page.getByRole('button', { name: 'Open the round' }).click()
    await poll(() => dialog(page).isVisible()).toBe(true)
    await poll(() => dialog(page).textContent()).toContain('The questionnaire is frozen as version 1')
    await dialog(page).getByRole('button', { name: 'Cancel' }).click()
    await poll(() => dialog(page).isVisible()).toBe(false)
    expect((await created!.reload()).status).toBe('draft')
    await page.getByRole('button', { name: 'Open the round' }).click()
    await dialog(page).getByRole('button', { name: 'Open the round' }).click()
    await poll(() => page.getByTestId('round-notice').textContent()).toContain('is open')
    await poll(() => page.getByTestId('round-status').textContent()).toContain('Open')

    // Closing says what happens and how to undo it.
    await page.getByRole('button', { name: 'Close the round' }).click()
    await poll(() => dialog(page).textContent()).toContain('Tablets stop recording')
    expect(await dialog(page).textContent()).toContain('Visits sent back to enumerators can no longer be fixed')
    expect(await dialog(page).textContent()).toContain('reopen the round')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'round-close-confirm.png') })
    await dialog(page).getByRole('button', { name: 'Close the round' }).click()
    await poll(() => page.getByTestId('round-status').textContent()).toContain('Closed')
    await poll(() => page.getByTestId('round-notice').textContent()).toContain('Reopen it to undo')
    await page.getByRole('button', { name: 'Reopen the round' }).click()
    await dialog(page).getByRole('button', { name: 'Reopen the round' }).click()
    await poll(() => page.getByTestId('round-status').textContent()).toContain('Open')
    expect((await created!.reload()).status).toBe('open')
    expect(problems).toEqual([])
    await context.close()
  }, 120_000)

  it('shows progress per village against a target the coordinator sets, at laptop and tablet size', async () => {
    const coordinator = freshClient()
    const enumerator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    await enumerator.signIn(demoUser('enumerator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const round = await makeRound(coordinator, me!.id)
    await enumerator.post('/api/sync/visits', { visits: [makeVisit(round), makeVisit(round)] })

    const context = await newTabletContext(browser)
    const page = await context.newPage()
    const problems = watchConsole(page)
    await signIn(page, demoUser('coordinator').email, `/rounds/${round.roundId}`)
    await poll(() => page.getByTestId('progress-summary').textContent()).toContain('Set a target')
    await page.getByLabel('Target: visits per village').fill('2')
    await page.getByRole('button', { name: 'Save target' }).click()
    await page.screenshot({ path: path.join(SCREENSHOTS, 'round-progress-saved.png'), fullPage: true })
    await poll(() => page.getByTestId('progress-summary').textContent()).toContain('1 of 2 villages have reached the target of 2 visits')
    const rows = page.getByTestId('progress-row')
    await poll(() => rows.allTextContents()).toEqual(expect.arrayContaining([expect.stringContaining('Reached'), expect.stringContaining('Below target: 0 of 2')]))
    await page.screenshot({ path: path.join(SCREENSHOTS, 'round-progress.png'), fullPage: true })
    await page.setViewportSize({ width: 800, height: 1180 })
    await page.getByRole('link', { name: 'Enumerators' }).click()
    await poll(() => page.getByRole('link', { name: 'Enumerators' }).getAttribute('aria-current')).toBe('page')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'round-enumerators-tablet.png'), fullPage: true })
    expect(problems).toEqual([])
    await context.close()
  }, 90_000)

  it('keeps a closed round\'s drafts and sent-back visits readable on the tablet, with no dead-end "Continue"', async () => {
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const round = await makeRound(coordinator, me!.id)

    const context = await newTabletContext(browser)
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: round.centre.lat + 0.001, longitude: round.centre.lon, accuracy: 8 })
    const page = await context.newPage()
    const problems = watchConsole(page)
    await signIn(page, demoUser('enumerator').email, '/field')
    await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
    // One visit saved and synced, then sent back; one draft left on the tablet.
    // The interview's order: consent first (that makes the draft), then the answers; "Saved" confirms.
    await page.goto(`/field/visit?round=${round.roundId}&village=${round.assignedVillageId}`)
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await page.getByLabel('Farm code *').fill('CLOSED-SENT')
    await page.getByRole('button', { name: 'Record GPS position' }).click()
    await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
    await page.locator('#q-farm_size_ha').fill('2')
    await page.locator('#q-household_size').fill('5')
    await page.locator('input[name="q-adopted"][value="true"]').check({ force: true })
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    await page.getByRole('link', { name: 'Back to field work' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await page.getByRole('button', { name: 'Sync now' }).click()
    await poll(async () => (await coordinator.get<{ items: Array<{ id: string }> }>(`/api/review/visits?roundId=${round.roundId}`)).body.items.length, 20_000).toBe(1)
    const sent = (await coordinator.get<{ items: Array<{ id: string }> }>(`/api/review/visits?roundId=${round.roundId}`)).body.items[0]!
    expect((await coordinator.post(`/api/review/visits/${sent.id}`, { action: 'send_back', reason: 'Check the farm size' })).status).toBe(200)
    await page.goto(`/field/visit?round=${round.roundId}&village=${round.assignedVillageId}`)
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await page.getByLabel('Farm code *').fill('CLOSED-DRAFT')
    await page.getByRole('link', { name: 'Keep as draft' }).click()
    await page.waitForURL(url => url.pathname === '/field')

    expect((await coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'closed' })).status).toBe(200)
    await page.getByRole('button', { name: 'Sync now' }).click()
    const sentBack = page.locator('[data-testid="local-visit"]', { hasText: 'CLOSED-SENT' })
    const draft = page.locator('[data-testid="local-visit"]', { hasText: 'CLOSED-DRAFT' })
    await poll(() => sentBack.textContent(), 20_000).toContain('Sent back, but the round is closed: it can no longer be fixed')
    await poll(() => draft.textContent(), 20_000).toContain('Not sent: the round is closed')
    expect(await sentBack.getByRole('link').textContent()).toContain('Open')
    expect(await sentBack.getByRole('link').textContent()).not.toContain('Continue')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-closed-round.png'), fullPage: true })
    await sentBack.getByRole('link').click()
    await poll(() => page.getByTestId('round-closed-notice').textContent()).toContain('ask them to reopen the round')
    expect(await page.getByText('This visit is not on this tablet').count()).toBe(0)
    expect(await page.locator('#q-farm_size_ha').isDisabled()).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-closed-visit.png'), fullPage: true })

    // Reopening gives the visit back to the enumerator.
    expect((await coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'open' })).status).toBe(200)
    await page.goto('/field')
    await page.getByRole('button', { name: 'Sync now' }).click()
    await poll(() => sentBack.textContent(), 20_000).toContain('Sent back')
    await poll(() => sentBack.getByRole('link').textContent(), 20_000).toContain('Continue')
    expect(problems).toEqual([])
    await context.close()
  }, 150_000)
})

describe('people: role changes and deactivation ask first', () => {
  it('names the old and new role, keeps the role when cancelled, and deactivates only after confirming', async () => {
    const admin = freshClient()
    await admin.signIn(demoUser('admin').email)
    const email = `confirm-${Date.now().toString(36)}@example.org`
    expect((await admin.post('/api/people/invitations', { email, role: 'enumerator', name: 'Tamsin Okoro-Lind' })).status).toBe(201)

    const context = await newTabletContext(browser)
    const page = await context.newPage()
    const problems = watchConsole(page)
    await signIn(page, demoUser('admin').email, '/people')
    await page.getByLabel('Search name or e-mail').fill(email)
    const row = page.locator(`[data-testid="person-row"][data-email="${email}"]`)
    await poll(() => row.count()).toBe(1)
    await row.getByLabel('Role of Tamsin Okoro-Lind').selectOption('coordinator')
    await poll(() => dialog(page).textContent()).toContain('Tamsin Okoro-Lind is enumerator today and will be coordinator')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'people-role-confirm.png') })
    await page.keyboard.press('Escape')
    await poll(() => dialog(page).isVisible()).toBe(false)
    await poll(() => row.getByLabel('Role of Tamsin Okoro-Lind').inputValue()).toBe('enumerator')
    expect((await User.findOne({ where: { email } }))!.role).toBe('enumerator')

    await row.getByLabel('Role of Tamsin Okoro-Lind').selectOption('coordinator')
    await dialog(page).getByRole('button', { name: 'Make coordinator' }).click()
    await poll(() => page.getByTestId('people-notice').textContent()).toContain('Tamsin Okoro-Lind is now coordinator')
    await poll(async () => (await User.findOne({ where: { email } }))!.role).toBe('coordinator')

    await row.getByRole('button', { name: /Deactivate/ }).click()
    await poll(() => dialog(page).textContent()).toContain('can no longer sign in')
    await dialog(page).getByRole('button', { name: 'Deactivate' }).click()
    await poll(() => row.textContent()).toContain('Deactivated')
    // Reactivating takes nothing away: no question.
    await row.getByRole('button', { name: /Reactivate/ }).click()
    await poll(() => row.textContent()).toContain('Invited')
    expect(await dialog(page).isVisible()).toBe(false)
    expect(problems).toEqual([])
    await context.close()
  }, 90_000)
})
