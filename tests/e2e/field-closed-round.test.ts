import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { User } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { watchConsole } from '../support/console'
import { makeRound } from '../support/field'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser, freshClient } from '../support/server'
import { openFieldStore } from '../support/field-pin'

// A round the coordinator closes while visits are still on a tablet: the draft and the sent-back visit stay
// readable with a notice that says why nothing can be changed, and reopening the round gives them back.
const opened = useBrowser()

/** A visit in the order of the interview: consent (that makes the draft), then the farm, its position and the answers. */
async function startVisit(page: Page, roundId: number, villageId: number, farmCode: string) {
  await page.goto(`/field/visit?round=${roundId}&village=${villageId}`)
  await openFieldStore(page)
  await page.getByRole('checkbox', { name: /informed consent/ }).check()
  await page.waitForURL(/\/field\/visit\?id=/)
  await page.getByLabel('Farm code *').fill(farmCode)
}

describe('a round closed under the tablet', () => {
  it('shows its draft and sent-back visit read-only with a notice, and reopening restores editing', async () => {
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const round = await makeRound(coordinator, me!.id)
    const tag = Date.now().toString(36).toUpperCase()

    const context = await newTabletContext(opened.browser)
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: round.centre.lat + 0.001, longitude: round.centre.lon, accuracy: 8 })
    const page = await context.newPage()
    await page.setViewportSize({ width: 820, height: 1180 })
    const problems = watchConsole(page)
    await signInPage(page, demoUser('enumerator').email, '/field')
    await openFieldStore(page)
    await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)

    // One visit saved, synced and sent back by the coordinator; one draft kept on the tablet.
    await startVisit(page, round.roundId, round.assignedVillageId, `SENT-${tag}`)
    await page.getByRole('button', { name: 'Record GPS position' }).click()
    await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
    await page.locator('#q-farm_size_ha').fill('2')
    await page.locator('#q-household_size').fill('5')
    await page.locator('input[name="q-adopted"][value="true"]').check({ force: true })
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    await page.getByRole('link', { name: 'Back to field work' }).click()
    await page.getByRole('button', { name: 'Sync now' }).click()
    const listed = async () => (await coordinator.get<{ items: Array<{ id: string }> }>(`/api/review/visits?roundId=${round.roundId}`)).body.items
    await poll(async () => (await listed()).length, 20_000).toBe(1)
    expect((await coordinator.post(`/api/review/visits/${(await listed())[0]!.id}`, { action: 'send_back', reason: 'Check the farm size' })).status).toBe(200)
    await startVisit(page, round.roundId, round.assignedVillageId, `DRAFT-${tag}`)
    await page.getByRole('link', { name: 'Keep as draft' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await openFieldStore(page)
    const sentBack = page.getByTestId('local-visit').filter({ hasText: `SENT-${tag}` })
    const draft = page.getByTestId('local-visit').filter({ hasText: `DRAFT-${tag}` })
    await page.getByRole('button', { name: 'Sync now' }).click()
    await poll(() => sentBack.innerText(), 20_000).toContain('Sent back')

    // The coordinator closes the round; the tablet learns it at its next sync.
    expect((await coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'closed' })).status).toBe(200)
    await page.getByRole('button', { name: 'Sync now' }).click()
    await poll(() => sentBack.innerText(), 20_000).toContain('Sent back, but the round is closed: it can no longer be fixed')
    await poll(() => draft.innerText()).toContain('Not sent: the round is closed')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'closed-round-list.png'), fullPage: true })
    for (const [row, name] of [[sentBack, 'sent-back'], [draft, 'draft']] as const) {
      expect(await row.getByRole('link').innerText()).not.toContain('Continue')
      await row.getByRole('link').click()
      const notice = page.getByTestId('round-closed-notice')
      await poll(() => notice.innerText()).toContain('This round is closed')
      expect(await notice.innerText()).toContain('ask them to reopen the round')
      expect(await page.getByText('This visit is not on this tablet').count()).toBe(0)
      expect(await page.getByLabel('Farm code *').isDisabled()).toBe(true)
      expect(await page.locator('#q-farm_size_ha').isDisabled()).toBe(true)
      expect(await page.getByRole('button', { name: 'Save visit' }).count()).toBe(0)
      // The notice is the first thing on the screen, not below the fold.
      expect((await notice.boundingBox())!.y).toBeLessThan(500)
      await page.screenshot({ path: path.join(SCREENSHOTS, `closed-round-${name}.png`) })
      await page.getByRole('link', { name: 'Back', exact: true }).click()
      await page.waitForURL(url => url.pathname === '/field')
      await openFieldStore(page)
    }

    // Reopened: both can be edited and saved again.
    expect((await coordinator.request('PATCH', `/api/rounds/${round.roundId}`, { status: 'open' })).status).toBe(200)
    await page.getByRole('button', { name: 'Sync now' }).click()
    await poll(() => sentBack.getByRole('link').innerText(), 20_000).toContain('Continue')
    await sentBack.getByRole('link').click()
    await poll(() => page.locator('#q-farm_size_ha').isEnabled()).toBe(true)
    expect(await page.getByTestId('round-closed-notice').count()).toBe(0)
    expect(await page.getByText('Check the farm size').isVisible()).toBe(true)
    await page.locator('#q-farm_size_ha').fill('2.2')
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    await page.getByRole('link', { name: 'Back to field work' }).click()
    await draft.getByRole('link').click()
    await poll(() => page.getByLabel('Farm code *').isEnabled()).toBe(true)
    expect(await page.getByTestId('round-closed-notice').count()).toBe(0)
    expect(await page.getByRole('button', { name: 'Save visit' }).isVisible()).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'closed-round-reopened.png') })
    expect(problems).toEqual([])
    await context.close()
  }, 150_000)
})
