import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { User, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext, waitForApp } from '../support/browser'
import { watchConsole } from '../support/console'
import { makeRound, makeVisit } from '../support/field'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser, freshClient } from '../support/server'
import { GOOD_PASSWORD, newPerson } from '../support/team'

const opened = useBrowser()

const signIn = signInPage

describe('review after the questionnaire changed', () => {
  it('shows a version-1 visit with its labels and units, corrects it, shows who changed what, and accepts the unflagged ones together', async () => {
    const coordinator = freshClient()
    const enumerator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    await enumerator.signIn(demoUser('enumerator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const round = await makeRound(coordinator, me!.id)
    const started = new Date(Date.now() - 60_000)
    const tag = Date.now().toString(36).toUpperCase()
    await enumerator.post('/api/sync/visits', { visits: [
      makeVisit(round, { farmCode: `QUICK-${tag}`, startedAt: started.toISOString(), savedAt: new Date(started.getTime() + 30_000).toISOString() }),
      makeVisit(round, { farmCode: `CALM-${tag}` }),
      makeVisit(round, { farmCode: `STILL-${tag}` })
    ] })
    // Version 2: a new question and a reworded label. Visits of version 1 keep theirs.
    const v2 = await coordinator.request('PUT', `/api/rounds/${round.roundId}/questionnaire`, { questions: [
      { key: 'farm_size_ha', label: 'Land farmed this season', type: 'number', unit: 'ha', min: 0, max: 50, required: true },
      { key: 'household_size', label: 'Household size', type: 'whole', min: 1, max: 30, required: true },
      { key: 'group_member', label: 'Farmer group member?', type: 'yesno' },
      { key: 'irrigated', label: 'Any land irrigated?', type: 'yesno' }
    ] })
    expect(v2.status).toBe(200)

    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    const problems = watchConsole(page)
    await signIn(page, demoUser('coordinator').email, `/review?roundId=${round.roundId}`)
    await poll(() => page.getByTestId('review-row').count()).toBe(3)
    await page.getByLabel('Farm code').fill(`calm-${tag}`.toLowerCase())
    await poll(() => page.getByTestId('review-row').count()).toBe(1)
    // Keyboard: the row takes focus and Enter opens it; focus moves into the panel.
    await page.getByTestId('review-row').first().focus()
    await page.keyboard.press('Enter')
    const panel = page.getByTestId('review-panel')
    await poll(() => page.evaluate(() => document.activeElement?.id)).toBe('review-panel-title')
    await poll(() => panel.getByTestId('review-answers').textContent()).toContain('Farm size')
    expect(await panel.getByTestId('review-answers').textContent()).toContain('2.5 ha')
    expect(await panel.textContent()).toContain('questionnaire version 1')
    await poll(() => panel.getByTestId('review-map').isVisible()).toBe(true)
    expect(await panel.getByTestId('review-location').textContent()).toMatch(/\d+ m from the centre of Test village/)

    await panel.getByRole('button', { name: 'Correct' }).click()
    await panel.locator('#q-farm_size_ha').fill('3.1')
    await panel.getByLabel('Why do you correct this visit?').fill('Measured again with the farmer')
    await panel.getByRole('button', { name: 'Save correction' }).click()
    await poll(() => page.getByTestId('review-notice').textContent()).toContain(`Farm CALM-${tag} corrected`)
    const corrections = page.getByTestId('review-corrections')
    await poll(() => corrections.textContent()).toContain('Tobias Ndlela')
    const text = (await corrections.textContent())!
    expect(text).toMatch(/Farm size\s*2\.5 ha\s*3\.1 ha/)
    expect(text).toContain('Measured again with the farmer')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'review-corrected.png'), fullPage: false })
    await page.setViewportSize({ width: 800, height: 1180 })
    await page.screenshot({ path: path.join(SCREENSHOTS, 'review-panel-tablet.png'), fullPage: false })
    await page.setViewportSize({ width: 1180, height: 820 })
    await panel.getByRole('button', { name: 'Close' }).click()

    // Bulk accept: the count is on the button and in the question; the flagged visit is left.
    await page.getByLabel('Farm code').fill('')
    await poll(() => page.getByTestId('bulk-accept').textContent()).toContain('Accept 2 unflagged visits')
    await page.getByTestId('bulk-accept').click()
    const dialog = page.getByTestId('confirm-dialog')
    await poll(() => dialog.textContent()).toContain('Accept 2 unflagged visits?')
    await dialog.getByRole('button', { name: 'Accept 2 visits' }).click()
    await poll(() => page.getByTestId('review-notice').textContent()).toContain('2 visits accepted.')
    expect((await Visit.findOne({ where: { farmCode: `QUICK-${tag}` } }))!.reviewState).toBe('received')
    expect((await Visit.findOne({ where: { farmCode: `STILL-${tag}` } }))!.reviewState).toBe('accepted')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'review-bulk-accepted.png'), fullPage: true })
    expect(problems).toEqual([])
    await context.close()
  }, 120_000)
})

describe('admin pages read as words', () => {
  it('shows the audit log in words with details and an export, and settings with real choices', async () => {
    const admin = freshClient()
    await admin.signIn(demoUser('admin').email)
    const person = await newPerson(admin, 'enumerator')
    expect((await admin.request('PATCH', `/api/people/${person.userId}`, { role: 'coordinator' })).status).toBe(200)

    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    const problems = watchConsole(page)
    await signIn(page, demoUser('admin').email, '/audit')
    // "Find" takes words as a person types them, in any case and order.
    await page.getByLabel('Find (a person, an action, a record)').fill('ROLE changed')
    await poll(async () => [...new Set(await page.getByTestId('audit-row').locator('td:nth-child(3)').allInnerTexts())]).toEqual(['Changed a role'])
    await page.getByLabel('Find (a person, an action, a record)').fill('')
    await page.getByLabel('What').selectOption({ label: 'Changed a role' })
    const row = page.getByTestId('audit-row').first()
    await poll(() => row.textContent()).toContain('Changed a role')
    expect(await row.textContent()).toContain('Person ·')
    await row.getByRole('button', { name: /Show/ }).click()
    await poll(() => page.getByTestId('audit-details').first().textContent()).toContain('Role: Enumerator → Coordinator')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'audit-details.png'), fullPage: true })
    const href = await page.getByRole('link', { name: 'Download these entries (CSV)' }).getAttribute('href')
    expect(href).toContain('/api/audit/export?action=user.role_changed')
    const csv = await (await page.request.get(href!)).text()
    expect(csv.split('\r\n')[0]).toBe('When (UTC),Who,Action,Record,Details,From address')
    expect(csv).toContain('Role: Enumerator → Coordinator')

    await page.goto('/settings')
    await waitForApp(page)
    await poll(() => page.getByLabel('Standard errors are clustered by').locator('option').allTextContents()).toEqual(['Village (the unit that was sampled)'])
    await page.screenshot({ path: path.join(SCREENSHOTS, 'settings.png'), fullPage: true })
    expect(problems).toEqual([])
    await context.close()
  }, 90_000)

  it('signs a deactivated person out of their open page with a message', async () => {
    const admin = freshClient()
    await admin.signIn(demoUser('admin').email)
    const person = await newPerson(admin, 'coordinator')
    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    await signIn(page, person.email, '/rounds', GOOD_PASSWORD)
    expect((await admin.request('PATCH', `/api/people/${person.userId}`, { active: false })).status).toBe(200)
    // The tab comes back into view: the page checks the account at once.
    await page.evaluate(() => window.dispatchEvent(new Event('focus')))
    await page.waitForURL(url => url.pathname === '/signin', { timeout: 40_000 })
    await poll(() => page.getByTestId('signin-notice').textContent()).toContain('an administrator deactivated your account')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'deactivated-signed-out.png') })
    await context.close()
  }, 90_000)
})
