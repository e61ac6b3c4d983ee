import { readFileSync } from 'node:fs'
import { strFromU8, unzipSync } from 'fflate'
import path from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext } from '../support/browser'
import { Publication, Round, Visit } from '../../server/db/models'
import { predictFarm } from '../../shared/utils/modelling/farm-prediction'
import { ADOPTION_PALETTE } from '../../shared/utils/map-palette'
import { closeTestDatabase, testDatabase } from '../support/database'
import { DEMO, baseUrl, demoUser } from '../support/server'

let browser: Browser

let accepted = 0
let roundId = 0

beforeAll(async () => {
  baseUrl()
  testDatabase()
  // The seeded round is the first one; other test files may have accepted a few more of its visits.
  const round = await Round.findOne({ order: [['id', 'ASC']] })
  roundId = round!.id
  accepted = await Visit.count({ where: { roundId, reviewState: 'accepted' } })
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

/** Counts canvas pixels of the map that are exactly one of the adoption palette's colours. */
function paletteColoursOnMap(page: Page): Promise<number> {
  return page.evaluate((palette) => {
    const wanted = new Set(palette.map(h => h.toLowerCase()))
    let hits = 0
    for (const canvas of document.querySelectorAll<HTMLCanvasElement>('[data-testid="adoption-map"] canvas')) {
      const data = canvas.getContext('2d')!.getImageData(0, 0, canvas.width, canvas.height).data
      for (let i = 0; i < data.length; i += 4) {
        const hex = `#${[data[i]!, data[i + 1]!, data[i + 2]!].map(v => v.toString(16).padStart(2, '0')).join('')}`
        if (wanted.has(hex)) hits++
      }
    }
    return hits
  }, [...ADOPTION_PALETTE])
}

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

    await page.getByLabel('Note for readers').fill('Results of the first sorghum round')
    await page.getByLabel('Show the planning aid on enumerators\' tablets').check()
    await page.getByRole('button', { name: /Publish this fit/ }).click()
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

  it('shows the funder the headline, one mark per published village, and the gap view', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await signIn(page, 'funder', '/overview')
    await page.goto(`/overview?round=${roundId}`)
    await expect.poll(() => page.getByTestId('headline').textContent(), { timeout: 15_000 }).toMatch(new RegExp(`Farms visited\\s*${accepted}`))
    await expect.poll(() => page.getByTestId('map-village').count()).toBe(24)
    // Every village is drawn on the map's canvas, and its pixels carry the palette's colours.
    await expect.poll(() => page.getByTestId('adoption-map').getAttribute('data-villages-drawn')).toBe('24')
    await expect.poll(() => paletteColoursOnMap(page)).toBeGreaterThan(0)
    const before = await page.getByTestId('map-village').locator('[data-colour]').evaluateAll(els => els.map(e => e.getAttribute('data-colour')))
    await page.getByText('Gap: observed − predicted').click()
    await expect.poll(() => page.getByTestId('map-legend').textContent()).toMatch(/Observed − predicted/)
    const after = await page.getByTestId('map-village').locator('[data-colour]').evaluateAll(els => els.map(e => e.getAttribute('data-colour')))
    expect(after).not.toEqual(before)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'funder-map.png'), fullPage: true })
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
    await context.setOffline(true)
    await page.reload()
    await expect.poll(() => page.getByTestId('adoption-map').getAttribute('data-villages-drawn'), { timeout: 20_000 }).toBe('24')
    await expect.poll(() => paletteColoursOnMap(page)).toBeGreaterThan(0)
    // The base layer is drawn from the outlines shipped with the app: its land colour is on the canvas.
    expect(await page.evaluate(() => [...document.querySelectorAll<HTMLCanvasElement>('[data-testid="adoption-map"] canvas')].some((canvas) => {
      const data = canvas.getContext('2d')!.getImageData(0, 0, canvas.width, canvas.height).data
      for (let i = 0; i < data.length; i += 4) if (data[i] === 0xEC && data[i + 1] === 0xE6 && data[i + 2] === 0xD3) return true
      return false
    }))).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'funder-map-offline.png') })
    await context.close()
  })

  it('shows an enumerator, offline and only once the visit is saved, the same predicted probability as the published model gives on the server', async () => {
    const context = await newTabletContext(browser, { serviceWorkers: 'allow' })
    const page = await context.newPage()
    await signIn(page, 'enumerator', '/field')
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)
    await expect.poll(() => page.getByTestId('field-village').count(), { timeout: 20_000 }).toBeGreaterThan(0)
    // Opening a visit online puts the published model on the tablet; consent makes it a draft with an address.
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await context.setOffline(true)
    await page.reload()
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
