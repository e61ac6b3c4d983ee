import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { Assignment, Round, SampleFarm, SampleVillage, User, Village, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext, waitForApp } from '../support/browser'
import { openFieldStore } from '../support/field-pin'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser } from '../support/server'

const opened = useBrowser()

// Answers for every question of the demo questionnaire (as in field-offline.test.ts).
const NUMBERS: Record<string, string> = { farm_size_ha: '3.1', household_size: '5', schooling_years: '8', age_head: '39', dealer_distance_km: '6.5', livestock_tlu: '0.8' }
const YESNO: Record<string, boolean> = { adopted: true, female_head: true, extension_contact: false, credit_access: false, group_member: true, owns_phone: true }

const farm = (page: Page, code: string) => page.locator(`[data-testid="sample-farm"][data-farm="${code}"]`)
const stateOf = async (page: Page, code: string) => (await farm(page, code).getByTestId('sample-farm-state').textContent())?.trim()

describe('the sample to visit on a tablet with no network, then review', () => {
  it('starts a visit from a listed farm, records a refusal with its reason and replacement, syncs once, and review shows the rates', async () => {
    // A village of the demo enumerator with two main-sample farms still to visit and a replacement not needed yet
    // (the demo seed leaves two such farms in each of the enumerator's villages: sample-demo.ts).
    const roundId = Math.min(...(await Round.findAll()).map(r => r.id))
    const enumerator = (await User.findOne({ where: { email: demoUser('enumerator').email } }))!
    const assignments = await Assignment.findAll({ where: { userId: enumerator.id, roundId } })
    let pick: { village: Village, toVisit: string, toRefuse: string, spare: string } | null = null
    for (const a of assignments) {
      const farms = await SampleFarm.findAll({ where: { roundId, villageId: a.villageId }, order: [['sampleRank', 'ASC'], ['farmCode', 'ASC']] })
      const visited = new Set((await Visit.findAll({ where: { roundId, villageId: a.villageId }, attributes: ['farmCode'] })).map(v => v.farmCode))
      const used = new Set(farms.map(f => f.replacedBy).filter(Boolean))
      const open = farms.filter(f => f.sampleRank === 0 && !f.outcome && !visited.has(f.farmCode))
      const spare = farms.find(f => f.sampleRank > 0 && !f.outcome && !visited.has(f.farmCode) && !used.has(f.farmCode))
      if (open.length >= 2 && spare) {
        pick = { village: (await Village.findByPk(a.villageId))!, toVisit: open[0]!.farmCode, toRefuse: open[1]!.farmCode, spare: spare.farmCode }
        break
      }
    }
    expect(pick, 'a village of the demo enumerator with farms still to visit').not.toBeNull()
    const { village, toVisit, toRefuse, spare } = pick!
    const context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: village.centreLat, longitude: village.centreLon, accuracy: 6 })
    const page = await context.newPage()
    await signInPage(page, demoUser('enumerator').email, '/field')
    await openFieldStore(page)
    await poll(() => farm(page, toVisit).count(), 20_000).toBe(1)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)

    // Offline from here: the list, its names and the states come from the tablet.
    await context.setOffline(true)
    await page.reload()
    await openFieldStore(page)
    await poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Field work')
    const list = page.locator(`[data-testid="sample-village"][data-village="${village.name}"]`)
    await poll(() => list.count()).toBe(1)
    expect(await stateOf(page, toVisit)).toBe('To visit')
    // The replacements are folded away, and their rows are built only when the enumerator opens the group.
    expect(await farm(page, spare).count()).toBe(0)
    await list.getByTestId('sample-group-spare').locator('summary').click()
    await poll(() => farm(page, spare).isVisible()).toBe(true)
    expect(await stateOf(page, spare)).toBe('Replacement, not needed yet')
    expect(await farm(page, toVisit).innerText()).toMatch(new RegExp(`^${toVisit} · \\w+`))

    // "Start visit" fills in the farm code.
    await farm(page, toVisit).getByRole('link', { name: 'Start visit' }).click()
    await page.waitForURL(url => url.pathname === '/field/visit' && url.searchParams.get('farm') === toVisit)
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
    await list.getByTestId('sample-group-visited').locator('summary').click()
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
    const cells = async () => (await row.locator('td').allInnerTexts()).map(t => t.trim())
    // Expected counts read straight from the tables (not through the app's code): main sample, interviewed main farms,
    // non-interviews of main farms not visited, replacements visited.
    const listed = await SampleFarm.findAll({ where: { roundId, villageId: village.id } })
    const seen = new Set((await Visit.findAll({ where: { roundId, villageId: village.id }, attributes: ['farmCode'] })).map(v => v.farmCode))
    const mainFarms = listed.filter(f => f.sampleRank === 0)
    const main = mainFarms.length
    const interviewed = mainFarms.filter(f => seen.has(f.farmCode)).length
    const count = (o: string) => String(mainFarms.filter(f => !seen.has(f.farmCode) && f.outcome === o).length)
    const replacements = String(listed.filter(f => f.sampleRank > 0 && seen.has(f.farmCode)).length)
    expect(Number(count('refused'))).toBeGreaterThanOrEqual(1)
    await poll(async () => (await cells()).slice(4, 11)).toEqual([String(main), String(interviewed), `${Math.round(interviewed / main * 100)} %`, count('refused'), count('absent'), count('moved'), replacements])
    // The village's weight on screen: N_v / (P_v · n_v), worked out here from the stored facts.
    const facts = (await SampleVillage.findOne({ where: { roundId, villageId: village.id } }))!
    expect((await cells())[3]).toBe((facts.listedFarms! / (facts.selectionProbability! * main)).toFixed(2))
    await rates.screenshot({ path: path.join(SCREENSHOTS, 'review-sample-rates.png') })

    // The round's Sample part: the list of the village, names shown to the coordinator.
    await review.goto(`/rounds/${roundId}?part=sample`)
    await waitForApp(review)
    await review.getByTestId('round-sample').locator('[data-testid="sample-rate-row"]').filter({ hasText: village.name }).click()
    const editor = review.getByTestId('sample-editor')
    await poll(async () => (await editor.locator('h3').textContent())?.trim()).toBe(`Sample list of ${village.name}`)
    await poll(() => editor.locator('[data-testid="sample-editor-row"]').count()).toBeGreaterThan(main)
    expect(await editor.getByLabel('Farm code, row 1', { exact: true }).inputValue()).toMatch(new RegExp(`^${village.code}-`))
    await review.screenshot({ path: path.join(SCREENSHOTS, 'round-sample.png'), fullPage: true })

    // The model builder offers the lists' weights under "Follow the sampling plan", and the fit uses them.
    await review.goto(`/models?round=${roundId}`)
    await waitForApp(review)
    await review.getByLabel('Distance to the nearest input dealer').check()
    await review.getByLabel('Contact with an extension officer last season?').check()
    await review.getByLabel(/Follow the sampling plan/).check()
    await review.getByLabel('Sampling weights', { exact: true }).selectOption({ label: 'Weights from the sample lists' })
    await poll(() => review.getByTestId('model-preview').textContent(), 15_000).toMatch(/accepted visits will be used/)
    await review.screenshot({ path: path.join(SCREENSHOTS, 'model-builder-sample-weights.png'), fullPage: true })
    await review.getByRole('button', { name: 'Fit the model' }).click()
    await review.waitForURL(/\/models\/\d+$/)
    await poll(() => review.getByTestId('fit-summary').count(), 60_000).toBe(1)
    expect(await review.getByTestId('fit-summary').textContent()).toMatch(/Archer–Lemeshow test for weighted samples/)
    await desk.close()
  }, 180_000)
})
