import path from 'node:path'
import { describe, it } from 'vitest'
import { User, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext, waitForApp } from '../support/browser'
import { makeRound, makeVisit } from '../support/field'
import { poll, useBrowser } from '../support/pages'
import { DEMO, demoUser, freshClient } from '../support/server'

const opened = useBrowser()

describe('the coordinator reviews visits in the browser', () => {
  it('filters the table, opens a flagged visit, corrects it and accepts it', async () => {
    const coordinator = freshClient()
    const enumerator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    await enumerator.signIn(demoUser('enumerator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const round = await makeRound(coordinator, me!.id)
    const started = new Date(Date.now() - 60_000)
    const fast = makeVisit(round, { farmCode: 'FAST-1', startedAt: started.toISOString(), savedAt: new Date(started.getTime() + 30_000).toISOString() })
    await enumerator.post('/api/sync/visits', { visits: [fast, makeVisit(round, { farmCode: 'CALM-1' }), makeVisit(round, { farmCode: 'CALM-2' })] })

    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    await page.goto(`/signin?next=${encodeURIComponent(`/review?roundId=${round.roundId}`)}`)
    await waitForApp(page)
    await page.getByLabel('E-mail').fill(demoUser('coordinator').email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(/\/review/)
    await poll(() => page.getByTestId('review-row').count()).toBe(3)
    await page.getByLabel('Flags').selectOption('1')
    await poll(() => page.getByTestId('review-row').count()).toBe(1)
    await page.getByTestId('review-row').first().click()
    await poll(() => page.getByTestId('review-panel').textContent()).toContain('Saved 30 s after it started')

    await page.getByRole('button', { name: 'Correct' }).click()
    await page.getByTestId('review-panel').locator('#q-farm_size_ha').fill('3.1')
    await page.getByLabel('Why do you correct this visit?').fill('Measured again with the farmer')
    await page.getByRole('button', { name: 'Save correction' }).click()
    await poll(async () => (await Visit.findByPk(fast.id))!.answers.farm_size_ha).toBe(3.1)
    await page.getByTestId('review-panel').getByRole('button', { name: 'Accept', exact: true }).click()
    await poll(async () => (await Visit.findByPk(fast.id))!.reviewState).toBe('accepted')
    await poll(() => page.getByTestId('review-row').first().textContent()).toContain('Accepted')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'review.png'), fullPage: true })
    await context.close()
  })
})
