import { readFileSync } from 'node:fs'
import { strFromU8, unzipSync } from 'fflate'
import path from 'node:path'
import { PNG } from 'pngjs'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext } from '../support/browser'
import { Publication, Round, Village, Visit } from '../../server/db/models'
import { predictFarm } from '../../shared/utils/modelling/farm-prediction'
import { closeTestDatabase, testDatabase } from '../support/database'
import { legendColours, tableColours, villagePixels, type PlacedVillage } from '../support/map-screen'
import { DEMO, baseUrl, demoUser } from '../support/server'
import { openFieldStore } from '../support/field-pin'

let browser: Browser

let accepted = 0
let roundId = 0
let round: Round
// Above the demo villages' median number of visits (about 62), so that some villages fall below it.
const VISIT_TARGET = 64

beforeAll(async () => {
  baseUrl()
  testDatabase()
  // The seeded round is the first one; other test files may have accepted a few more of its visits.
  round = (await Round.findOne({ order: [['id', 'ASC']] }))!
  roundId = round.id
  accepted = await Visit.count({ where: { roundId, reviewState: 'accepted' } })
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

/** The villages of a published round with their positions, as the funder's data route gives them. */
async function placedVillages(page: Page, round: number) {
  const answer = await page.request.get(`/api/overview/${round}`)
  expect(answer.status()).toBe(200)
  return (await answer.json() as { villages: Array<{ name: string, lat: number, lon: number }> }).villages
}

/**
 * Checks the composed screen: each village inside the visible map shows, at its centre, a colour of the legend,
 * and (mostly: a neighbour's circle may overlap a centre, the more so zoomed out) the colour the table gives it. Answers a
 * description of what is wrong, '' when all is right, so that expect.poll can wait for a redraw.
 */
// `strays`: zoomed far out, circles a few pixels wide overlap and their rings blend, so a few centres may show a
// mix; the villages must still show legend colours at `minimum` places or more.
async function mapShowsVillages(page: Page, villages: PlacedVillage[], minimum: number, scope = page.locator('body'), ownShare = 0.85, strays = 0) {
  const [pixels, legend, table] = await Promise.all([villagePixels(page, villages, scope), legendColours(page, scope), tableColours(page, scope)])
  if (pixels.length < minimum) return `only ${pixels.length} villages inside the map`
  const outside = pixels.filter(p => !legend.includes(p.colour))
  if (outside.length > strays || pixels.length - outside.length < minimum) return `not a legend colour at ${outside.map(p => `${p.name} ${p.colour}`).join(', ')}`
  const own = pixels.filter(p => table.get(p.name) === p.colour).length
  return own >= Math.ceil(ownShare * pixels.length) ? '' : `only ${own} of ${pixels.length} villages show their table colour`
}

const viewPicker = (page: Page) => page.locator('fieldset[aria-label="What the map shows"]')

async function signIn(page: Page, role: string, next = '/') {
  await page.goto(`/signin?next=${encodeURIComponent(next)}`)
  await page.getByLabel('E-mail').fill(demoUser(role).email)
  await page.getByLabel('Password').fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === next)
}

describe('the coordinator fits, reads and publishes a model; the funder sees the map', () => {
  it('builds a model with a preview, fits it in the background and reads the results', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await signIn(page, 'coordinator', '/models')
    await page.goto(`/models?round=${roundId}`)
    await page.getByLabel('Distance to the nearest input dealer').check()
    await page.getByLabel('Contact with an extension officer last season?').check()
    await page.getByLabel('Is the household headed by a woman?').check()
    await expect.poll(() => page.getByTestId('model-preview').textContent(), { timeout: 15_000 }).toContain(`${accepted} accepted visits will be used`)
    await expect.poll(() => page.getByTestId('model-preview').textContent()).toMatch(/P\(adopt = 1\) = Φ\(β₀/)
    await page.getByRole('button', { name: 'Fit the model' }).click()
    await page.waitForURL(/\/models\/\d+$/)
    await expect.poll(() => page.getByTestId('margins-table').count(), { timeout: 30_000 }).toBe(1)
    const readings = await page.getByTestId('effect-reading').allTextContents()
    expect(readings.some(r => /Answering yes to “Contact with an extension officer last season\?” goes with an? [\d.]+-point higher adoption probability/.test(r))).toBe(true)
    expect(await page.getByTestId('model-cautions').textContent()).toMatch(/not causal effects/)
    await expect.poll(() => page.locator('canvas').count()).toBeGreaterThanOrEqual(4)
    expect(await page.getByTestId('village-table').locator('tbody tr').count()).toBe(24)
    // Our own order: the story in points, how sure we are, how well it predicts, and the technical block last.
    const headings = await page.locator('h2').allInnerTexts()
    const at = (h: string) => headings.findIndex(t => t.trim().startsWith(h))
    expect(at('What goes with adoption')).toBeGreaterThanOrEqual(0)
    expect(at('What goes with adoption')).toBeLessThan(at('How sure we are'))
    expect(at('How sure we are')).toBeLessThan(at('How well the model predicts'))
    expect(await page.getByTestId('significance-key').innerText()).toMatch(/●● clear \(p < 0\.01.*● likely \(p < 0\.05.*no mark could be chance/s)
    const fitText = await page.getByTestId('fit-summary').innerText()
    expect(fitText).toMatch(/Tells adopters from non-adopters[\s\S]*0\.5 is a coin toss/)
    expect(fitText).not.toMatch(/at 0\.50/)
    // The coefficient table is folded away until asked for.
    expect(await page.getByTestId('coefficient-table').isVisible()).toBe(false)
    await page.getByText('Technical detail').click()
    await expect.poll(() => page.getByTestId('coefficient-table').isVisible()).toBe(true)
    const distanceRow = page.getByTestId('effect-row').filter({ hasText: 'Distance to the nearest input dealer' })
    expect(await distanceRow.innerText()).toContain('per additional km')
    const onScreen = (await distanceRow.locator('td').nth(1).innerText()).trim()
    await page.getByLabel('for one typical farm').check()
    await expect.poll(() => page.getByTestId('margins-table').locator('caption').textContent()).toMatch(/for one typical farm/)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-results.png'), fullPage: true })
    await page.setViewportSize({ width: 820, height: 1180 })
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-results-tablet.png'), fullPage: true })
    await page.setViewportSize({ width: 1180, height: 820 })
    await page.getByLabel('over all farms visited').check()
    await page.waitForTimeout(1500)
    await page.locator('section[aria-labelledby="story-heading"]').screenshot({ path: path.join(SCREENSHOTS, 'model-results-story.png') })
    await page.locator('section[aria-labelledby="quality-heading"]').screenshot({ path: path.join(SCREENSHOTS, 'model-results-quality.png') })

    // A yes/no scenario through the form, read as an answer, never as "set to 1".
    await page.getByLabel('Scenario name').fill('extension for all')
    await page.getByLabel('Characteristic').selectOption({ label: 'Contact with an extension officer last season?' })
    await page.locator('#scenario-value').selectOption('yes')
    await page.getByRole('button', { name: 'Predict adoption under this scenario' }).click()
    await expect.poll(() => page.getByTestId('scenario-result').filter({ hasText: 'extension for all' }).count(), { timeout: 20_000 }).toBe(1)
    const scenario = await page.getByTestId('scenario-result').filter({ hasText: 'extension for all' }).textContent()
    expect(scenario).toMatch(/a change of [\d.]+ points/)
    expect(scenario).toMatch(/answered yes/)
    expect(scenario).not.toMatch(/set to (1|true)/)

    // The export: one zip of rectangular tables, effects in the same points as on screen, unit in the header.
    const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'All tables (zip)' }).click()])
    const files = unzipSync(new Uint8Array(readFileSync((await download.path())!)))
    expect(strFromU8(files['README.txt']!)).toMatch(/not causal effects/)
    const effects = strFromU8(files['effects.csv']!).trim().split('\n')
    expect(effects[0]).toMatch(/^characteristic,change_measured,measured_over,change_points,/)
    const distance = effects.find(l => l.startsWith('Distance to the nearest input dealer'))!.split(',')
    expect(`${Number(distance[3]) >= 0 ? '+' : ''}${Number(distance[3]).toFixed(1)}`).toBe(onScreen)

    // A second scenario, only explored: it is not chosen for publication and must never reach funders.
    await page.getByLabel('Scenario name').fill('trial without extension')
    await page.getByLabel('Characteristic').selectOption({ label: 'Contact with an extension officer last season?' })
    await page.locator('#scenario-value').selectOption('no')
    await page.getByRole('button', { name: 'Predict adoption under this scenario' }).click()
    await expect.poll(() => page.getByTestId('scenario-result').filter({ hasText: 'trial without extension' }).count(), { timeout: 20_000 }).toBe(1)

    // Publishing: choices, then a preview of the funder's page, then the confirmation.
    await page.getByRole('button', { name: /Publish this fit/ }).click()
    await page.getByLabel('Note for readers').fill('Results of the first sorghum round')
    await page.getByLabel('Visits wanted per village (target)').fill(String(VISIT_TARGET))
    await page.getByRole('checkbox', { name: /extension for all/ }).check()
    await page.getByLabel('Show the planning aid on enumerators\' tablets').check()
    await page.getByRole('button', { name: 'Preview what funders will see' }).click()
    const preview = page.getByTestId('publish-preview')
    await expect.poll(() => preview.getByTestId('map-village').count(), { timeout: 15_000 }).toBe(24)
    expect(await preview.textContent()).toMatch(/Scenarios shown: extension for all\./)
    expect(await preview.textContent()).not.toContain('trial without extension')
    const below = await preview.locator('[data-below-target="yes"]').count()
    expect(below).toBeGreaterThan(0)
    expect(below).toBeLessThan(24)
    expect(await preview.locator('[data-below-target="yes"]').first().textContent()).toContain('below target')
    // The preview's map, on the composed screen: every village in a legend colour, the marked ones ringed.
    // Positions from the database, for the villages of the round (the table's rows; other tests add villages elsewhere).
    const inTable = new Set((await preview.locator('[data-testid="map-village"] td:first-child').allTextContents()).map(t => t.trim()))
    const places = (await Village.findAll({ where: { organisationId: round.organisationId } }))
      .filter(v => inTable.has(v.name)).map(v => ({ name: v.name, lat: v.centreLat, lon: v.centreLon }))
    expect(places).toHaveLength(24)
    await preview.getByTestId('adoption-map').screenshot({ path: path.join(SCREENSHOTS, 'publish-preview-map.png') })
    await expect.poll(() => mapShowsVillages(page, places, 20, preview), { timeout: 10_000 }).toBe('')
    const markedNames = new Set((await preview.locator('[data-below-target="yes"] td:first-child').allTextContents()).map(t => t.trim()))
    const pixels = await villagePixels(page, places, preview)
    expect(pixels.filter(p => markedNames.has(p.name)).some(p => p.darkRuns >= 2)).toBe(true)
    await preview.screenshot({ path: path.join(SCREENSHOTS, 'publish-preview.png') })
    await page.getByRole('button', { name: 'Yes, publish to funders' }).click()
    await expect.poll(() => page.getByRole('status').filter({ hasText: 'Published' }).count()).toBe(1)
    await context.close()
  })

  it('fits a logit on the same specification and compares it with the probit side by side', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await signIn(page, 'coordinator', '/models')
    await page.goto(`/models?round=${roundId}`)
    await page.getByLabel('Distance to the nearest input dealer').check()
    await page.getByLabel('Contact with an extension officer last season?').check()
    await page.getByLabel('Is the household headed by a woman?').check()
    await page.getByLabel('Distribution function F').selectOption('logit')
    await expect.poll(() => page.getByTestId('model-preview').textContent(), { timeout: 15_000 }).toMatch(/Λ\(β₀/)
    await page.getByRole('button', { name: 'Fit the model' }).click()
    await page.waitForURL(/\/models\/\d+$/)
    await expect.poll(() => page.getByTestId('margins-table').count(), { timeout: 30_000 }).toBe(1)
    // A logit's coefficients can be read as odds ratios: exp(b), 1 meaning no change.
    await page.getByText('Technical detail').click()
    await page.getByLabel('odds ratios').check()
    const table = page.getByTestId('coefficient-table')
    await expect.poll(() => table.locator('thead').innerText()).toContain('Odds ratio')
    const ratios = await table.locator('tbody tr td:nth-child(2)').allInnerTexts()
    expect(ratios.length).toBeGreaterThanOrEqual(4)
    expect(ratios.every(r => Number(r) > 0)).toBe(true)
    await page.getByRole('link', { name: 'All fits of this round' }).click()
    await expect.poll(() => page.getByTestId('run-row').count()).toBeGreaterThanOrEqual(2)
    // The list says which fit funders see and what each fit holds.
    expect(await page.getByTestId('run-published').count()).toBe(1)
    expect(await page.getByTestId('run-row').first().innerText()).toMatch(/3 characteristics: .*Distance to the nearest input dealer/)
    expect(await page.getByTestId('run-row').first().innerText()).toMatch(/Logit \(logistic\)/)
    // The two newest fits: this logit and the probit published above.
    const boxes = page.getByTestId('run-row').locator('input[type="checkbox"]')
    await boxes.nth(0).check()
    await boxes.nth(1).check()
    await page.getByRole('link', { name: 'Compare 2 fits' }).click()
    await page.waitForURL(/\/models\/compare\?ids=/)
    await expect.poll(() => page.getByTestId('compare-fit').textContent()).toMatch(/probit[\s\S]*logit|logit[\s\S]*probit/)
    expect(await page.getByTestId('lr-tests').textContent()).toMatch(/different links|not nested|None of these fits is nested/)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-compare.png'), fullPage: true })
    await context.close()
  })

  it('prints a report that names the organisation, round, technology and date, with the charts and every folded section open', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    const errors: string[] = []
    page.on('pageerror', e => errors.push(e.message))
    page.on('console', m => m.type() === 'error' && errors.push(m.text()))
    await signIn(page, 'coordinator', '/models')
    const publication = await Publication.findOne({ where: { roundId, active: true } })
    const round = await Round.findByPk(roundId)
    await page.goto(`/models/${publication!.modelRunId}/report`)
    const header = page.getByTestId('report-header')
    await expect.poll(() => header.innerText(), { timeout: 15_000 }).toContain(round!.name)
    const text = await header.innerText()
    expect(text).toContain(DEMO.organisation.name.toUpperCase())
    expect(text).toContain(round!.technology)
    expect(text).toMatch(/fitted \d{1,2} [A-Z][a-z]{2} \d{4}/)
    await expect.poll(() => page.getByTestId('model-report').locator('canvas').count()).toBeGreaterThanOrEqual(4)
    expect(await page.getByTestId('coefficient-table').isVisible()).toBe(false)
    await page.emulateMedia({ media: 'print' })
    // On paper the folded technical block is open, and the app's chrome is gone.
    await expect.poll(() => page.getByTestId('coefficient-table').isVisible()).toBe(true)
    expect(await page.getByRole('button', { name: 'Print or save as PDF' }).isVisible()).toBe(false)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-report-print.png'), fullPage: true })
    expect(errors).toEqual([])
    await context.close()
  })

  it('shows the funder every village above the base layer, in every view and at every zoom', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await signIn(page, 'funder', '/overview')
    await page.goto(`/overview?round=${roundId}`)
    await expect.poll(() => page.getByTestId('headline').textContent(), { timeout: 15_000 }).toMatch(new RegExp(`Farms visited\\s*${accepted}`))
    await expect.poll(() => page.getByTestId('map-village').count()).toBe(24)
    await expect.poll(() => page.getByTestId('adoption-map').getAttribute('data-villages-drawn')).toBe('24')
    await page.getByText('The villages as a table').click()
    const villages = await placedVillages(page, roundId)
    // Only the scenario the coordinator chose is published; the exploratory one never reaches the funder.
    expect(await page.locator('body').textContent()).not.toContain('trial without extension')
    const views = ['Predicted adoption', 'Observed adoption', 'Gap: observed − predicted', 'Scenario: extension for all']
    const shown: string[][] = []
    for (const view of views) {
      await viewPicker(page).getByText(view, { exact: true }).click()
      await expect.poll(() => mapShowsVillages(page, villages, 20), { timeout: 10_000 }).toBe('')
      // The table's value column follows the view.
      expect(await page.getByTestId('map-view-column').textContent()).toMatch(view.startsWith('Scenario') ? /extension for all/ : view.startsWith('Gap') ? /Observed − predicted/ : new RegExp(view, 'i'))
      shown.push(await page.getByTestId('map-view-value').allTextContents())
    }
    expect(new Set(shown.map(s => s.join('|'))).size).toBe(views.length)
    expect(shown[2]!.every(t => /^[+−]\d+\.\d points$/.test(t.trim()))).toBe(true)
    // Villages below the coordinator's target of visits are marked in the table and ringed on the map.
    const marked = new Set((await page.locator('[data-below-target="yes"] td:first-child').allTextContents()).map(t => t.trim()))
    expect(marked.size).toBeGreaterThan(0)
    expect((await villagePixels(page, villages)).filter(p => marked.has(p.name)).some(p => p.darkRuns >= 2)).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'funder-map.png'), fullPage: true })

    // Zoomed in, then out three times from where it opened: whatever is inside the map still shows. Zoomed out,
    // circles (sized in pixels) overlap, so only the legend colours are required there.
    await viewPicker(page).getByText('Predicted adoption', { exact: true }).click()
    for (const [button, minimum, ownShare, strays] of [['Zoom in', 3, 0.85, 0], ['Zoom out', 20, 0.85, 0], ['Zoom out', 20, 0, 4], ['Zoom out', 20, 0, 4]] as const) {
      const before = await page.getByTestId('adoption-map').getAttribute('data-view')
      await page.getByRole('button', { name: button }).click()
      await expect.poll(() => page.getByTestId('adoption-map').getAttribute('data-view')).not.toBe(before)
      await expect.poll(() => mapShowsVillages(page, villages, minimum, page.locator('body'), ownShare, strays), { timeout: 10_000 }).toBe('')
    }
    await page.getByTestId('adoption-map').screenshot({ path: path.join(SCREENSHOTS, 'funder-map-zoomed-out.png') })
    await context.close()
  })

  it('shows the coordinator the same map on the adoption map page', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await signIn(page, 'coordinator', '/overview')
    await page.goto(`/overview?round=${roundId}`)
    await expect.poll(() => page.getByTestId('map-village').count(), { timeout: 15_000 }).toBe(24)
    const villages = await placedVillages(page, roundId)
    await expect.poll(() => mapShowsVillages(page, villages, 20), { timeout: 10_000 }).toBe('')
    await context.close()
  })

  it('still draws the base layer and the villages with the network cut', async () => {
    const context = await newTabletContext(browser, { serviceWorkers: 'allow' })
    const page = await context.newPage()
    await signIn(page, 'funder', '/overview')
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)
    // Once the worker controls the page, one online visit leaves the page and its data in its cache.
    await page.reload()
    await expect.poll(() => page.evaluate(() => navigator.serviceWorker.controller !== null)).toBe(true)
    await expect.poll(() => page.getByTestId('adoption-map').getAttribute('data-villages-drawn')).toBe('24')
    const villages = await placedVillages(page, roundId)
    await context.setOffline(true)
    await page.reload()
    await expect.poll(() => page.getByTestId('adoption-map').getAttribute('data-villages-drawn'), { timeout: 20_000 }).toBe('24')
    await page.getByText('The villages as a table').click()
    await expect.poll(() => mapShowsVillages(page, villages, 20), { timeout: 10_000 }).toBe('')
    // The base layer is drawn from the outlines shipped with the app: its land fill is on the screen, under the villages.
    const shot = PNG.sync.read(await page.getByTestId('adoption-map').screenshot())
    let land = 0
    for (let i = 0; i < shot.data.length; i += 4) {
      if (Math.abs(shot.data[i]! - 0xEC) <= 2 && Math.abs(shot.data[i + 1]! - 0xE6) <= 2 && Math.abs(shot.data[i + 2]! - 0xD3) <= 2) land++
    }
    expect(land).toBeGreaterThan(1000)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'funder-map-offline.png') })
    await context.close()
  })

  it('shows an enumerator, offline and only once the visit is saved, the same predicted probability as the published model gives on the server', async () => {
    const context = await newTabletContext(browser, { serviceWorkers: 'allow' })
    const page = await context.newPage()
    await signIn(page, 'enumerator', '/field')
    await openFieldStore(page)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)
    await expect.poll(() => page.getByTestId('field-village').count(), { timeout: 20_000 }).toBeGreaterThan(0)
    // Opening a visit online puts the published model on the tablet; consent makes it a draft with an address.
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await context.setOffline(true)
    await page.reload()
    await openFieldStore(page)
    await expect.poll(() => page.getByTestId('offline-banner').count(), { timeout: 15_000 }).toBe(1)
    const answers: Record<string, number | boolean> = { farm_size_ha: 2.4, household_size: 6, schooling_years: 7, age_head: 41, dealer_distance_km: 8.5, livestock_tlu: 1.2, adopted: false, female_head: true, extension_contact: false, credit_access: false, group_member: true, owns_phone: true }
    await page.getByLabel('Farm code *').fill(`AID-${Date.now().toString(36)}`)
    await page.getByRole('button', { name: 'No fix: type the position' }).click()
    await page.getByLabel(/Why there is no GPS fix/).fill('Under a tin roof')
    for (const [key, value] of Object.entries(answers)) {
      if (typeof value === 'number') await page.locator(`#q-${key}`).fill(String(value))
      else await page.locator(`input[name="q-${key}"][value="${value}"]`).check({ force: true })
    }
    // Never during the interview: the aid could steer the answers.
    expect(await page.getByTestId('planning-aid').count()).toBe(0)
    await page.getByRole('button', { name: 'Save visit' }).click()
    await expect.poll(() => page.getByTestId('planning-aid').getAttribute('data-probability'), { timeout: 15_000 }).toMatch(/^0\.\d+/)
    const onTablet = Number(await page.getByTestId('planning-aid').getAttribute('data-probability'))
    // The server side: the active publication's frozen coefficients and plan, through the engine in Node.
    const publication = await Publication.findOne({ where: { roundId, active: true } })
    const { link, plan, coefficients } = publication!.content
    const onServer = predictFarm({ publicationId: publication!.id, link, plan, coefficients }, answers)
    expect(onTablet).toBeCloseTo(onServer!.probability, 12)
    expect(await page.getByTestId('planning-aid').textContent()).toMatch(/not an eligibility decision/)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'tablet-planning-aid.png'), fullPage: true })
    await context.close()
  })

  it('never gives a funder household-level routes', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await signIn(page, 'funder', '/')
    for (const url of ['/api/review/visits', '/api/review/photos/00000000-0000-4000-8000-000000000000', '/api/sync/visits', '/api/models?roundId=1', `/api/models/questions?roundId=${roundId}`]) {
      const answer = await page.request.get(url)
      expect(answer.status(), url).toBe(403)
    }
    await context.close()
  })
})
