import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { Round, SampleFarm, Village, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext, waitForApp } from '../support/browser'
import { poll, signInPage, useBrowser } from '../support/pages'
import { DEMO, demoUser } from '../support/server'

const opened = useBrowser()

// Answers for every question of the demo questionnaire (as in field-offline.test.ts).
const NUMBERS: Record<string, string> = { farm_size_ha: '3.1', household_size: '5', schooling_years: '8', age_head: '39', dealer_distance_km: '6.5', livestock_tlu: '0.8' }
const YESNO: Record<string, boolean> = { adopted: true, female_head: true, extension_contact: false, credit_access: false, group_member: true, owns_phone: true }

const farm = (page: Page, code: string) => page.locator(`[data-testid="sample-farm"][data-farm="${code}"]`)
const stateOf = async (page: Page, code: string) => (await farm(page, code).getByTestId('sample-farm-state').textContent())?.trim()

describe('the sample to visit on a tablet with no network, then review', () => {
  it('starts a visit from a listed farm, records a refusal with its reason and replacement, syncs once, and review shows the rates', async () => {
    // The demo enumerator's first village keeps two main-sample farms still to visit (demo seed: sample-demo.ts).
    const village = (await Village.findOne({ where: { code: 'OMB-01' } }))!
    const roundId = Math.min(...(await Round.findAll()).map(r => r.id))
    const [toVisit, toRefuse, spare] = ['OMB-01-950', 'OMB-01-951', 'OMB-01-960']
    const context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: village.centreLat, longitude: village.centreLon, accuracy: 6 })
    const page = await context.newPage()
    await page.goto('/signin?next=/field')
    await waitForApp(page)
    await page.getByLabel('E-mail').fill(demoUser('enumerator').email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await poll(() => farm(page, toVisit).count(), 20_000).toBe(1)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)

    // Offline from here: the list, its names and the states come from the tablet.
    await context.setOffline(true)
    await page.reload()
    await poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Field work')
    const list = page.locator(`[data-testid="sample-village"][data-village="${village.name}"]`)
    await poll(() => list.count()).toBe(1)
    expect(await stateOf(page, toVisit)).toBe('To visit')
    expect(await stateOf(page, spare)).toBe('Replacement, not needed yet')
    expect(await farm(page, toVisit).innerText()).toMatch(/OMB-01-950 · \w+/)

    // "Start visit" fills in the farm code.
    await farm(page, toVisit).getByRole('link', { name: 'Start visit' }).click()
    await page.waitForURL(/\/field\/visit\?round=.*farm=OMB-01-950/)
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    expect(await page.getByLabel('Farm code *').inputValue()).toBe(toVisit)
    await page.getByRole('button', { name: 'Record GPS position' }).click()
    await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
    for (const [key, value] of Object.entries(NUMBERS)) await page.locator(`#q-${key}`).fill(value)
    for (const [key, value] of Object.entries(YESNO)) await page.locator(`input[name="q-${key}"][value="${value}"]`).check({ force: true })
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    await page.getByRole('link', { name: 'Back to field work' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await poll(() => stateOf(page, toVisit)).toBe('Visited')

    // A refusal: the reason is asked (refused without one), then the next replacement by rank is brought in.
    await farm(page, toRefuse).getByRole('button', { name: 'Not interviewed…' }).click()
    const form = page.getByRole('form', { name: `Why ${toRefuse} was not interviewed` })
    await form.getByRole('button', { name: 'Save the reason' }).click()
    await poll(() => form.getByText('Choose why the farm was not interviewed').count()).toBe(1)
    await form.getByLabel('Refused').check()
    await form.getByLabel('What happened').fill('The head declined: harvest week')
    expect(await form.getByText(`Visit the next replacement instead: ${spare}`).count()).toBe(1)
    await form.getByRole('button', { name: 'Save the reason' }).click()
    await poll(() => stateOf(page, toRefuse)).toBe(`Refused · replaced by ${spare} · waiting to sync · “The head declined: harvest week”`)
    await poll(() => stateOf(page, spare)).toBe(`To visit · in place of ${toRefuse}`)
    await list.screenshot({ path: path.join(SCREENSHOTS, 'field-sample-offline.png') })
    expect(await Visit.count({ where: { farmCode: toVisit } })).toBe(0)

    // Back online: one sync sends the visit and the refusal.
    await context.setOffline(false)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent(), 30_000).toBe('0')
    await poll(() => stateOf(page, toRefuse), 30_000).toBe(`Refused · replaced by ${spare} · “The head declined: harvest week”`)
    expect(await Visit.count({ where: { farmCode: toVisit, roundId } })).toBe(1)
    const refused = (await SampleFarm.findOne({ where: { roundId, farmCode: toRefuse } }))!
    expect(refused).toMatchObject({ outcome: 'refused', outcomeNote: 'The head declined: harvest week', replacedBy: spare })
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-sample-synced.png'), fullPage: true })
    await context.close()

    // Review: the response rates of the village count the refusal and the visit.
    const desk = await opened.browser.newContext({ baseURL: process.env.FURROWCAST_TEST_URL, viewport: { width: 1400, height: 1000 } })
    const review = await desk.newPage()
    await signInPage(review, demoUser('coordinator').email, `/review?roundId=${roundId}`)
    const rates = review.getByTestId('review-sample-rates')
    await rates.locator('summary').click()
    const row = rates.locator('[data-testid="sample-rate-row"]').filter({ hasText: village.name })
    const main = await SampleFarm.count({ where: { roundId, villageId: village.id, sampleRank: 0 } })
    const cells = async () => (await row.locator('td').allInnerTexts()).map(t => t.trim())
    // Village 0 of the demo: one earlier refusal (…-901) and now …-951; …-950 visited, the rest of the main sample visited by the seed.
    await poll(async () => (await cells()).slice(3, 10)).toEqual([String(main), String(main - 2), '2', '0', '0', '1', `${Math.round((main - 2) / main * 100)} %`])
    await rates.screenshot({ path: path.join(SCREENSHOTS, 'review-sample-rates.png') })

    // The round's Sample part: the list of the village, names shown to the coordinator.
    await review.goto(`/rounds/${roundId}?part=sample`)
    await waitForApp(review)
    await review.getByTestId('round-sample').locator('[data-testid="sample-rate-row"]').filter({ hasText: village.name }).click()
    const editor = review.getByTestId('sample-editor')
    await poll(() => editor.locator('h3').textContent()).toBe(`Sample list of ${village.name}`)
    await poll(() => editor.locator('[data-testid="sample-editor-row"]').count()).toBeGreaterThan(main)
    expect(await editor.getByLabel('Farm code, row 1').inputValue()).toMatch(/^OMB-01-/)
    await review.screenshot({ path: path.join(SCREENSHOTS, 'round-sample.png'), fullPage: true })
    await desk.close()
  }, 180_000)
})
