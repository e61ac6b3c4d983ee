import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { Round, User } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { watchConsole } from '../support/console'
import { makeRound, makeVisit } from '../support/field'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser, freshClient } from '../support/server'

// The closed round as the tablet sees it has its own file: field-closed-round.test.ts.
const opened = useBrowser()
const signIn = signInPage

const dialog = (page: Page) => page.getByTestId('confirm-dialog')

describe('rounds that do not trap anyone', () => {
  it('lists rounds in one sortable table, copies a questionnaire, and opens, closes and reopens a round after asking', async () => {
    const context = await newTabletContext(opened.browser)
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
    // (The copied demo questionnaire has 14 questions, one with its condition shown, a check across answers, and the
    // plots group with its 4 questions: 18 question editors of about 600 px; its Kiswahili texts stay folded.)
    expect(height).toBeLessThan(12_800)
    expect(await page.getByTestId('translations-sw').count()).toBe(0)

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

    const context = await newTabletContext(opened.browser)
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
})

describe('people: role changes and deactivation ask first', () => {
  it('names the old and new role, keeps the role when cancelled, and deactivates only after confirming', async () => {
    const admin = freshClient()
    await admin.signIn(demoUser('admin').email)
    const email = `confirm-${Date.now().toString(36)}@example.org`
    expect((await admin.post('/api/people/invitations', { email, role: 'enumerator', name: 'Tamsin Okoro-Lind' })).status).toBe(201)

    const context = await newTabletContext(opened.browser)
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
