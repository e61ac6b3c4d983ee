import path from 'node:path'
import type { Browser } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext } from '../support/browser'
import { Round } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { DEMO, baseUrl, demoUser } from '../support/server'

let browser: Browser
let roundId = 0

beforeAll(async () => {
  baseUrl()
  testDatabase()
  const round = await Round.findOne({ order: [['id', 'ASC']] })
  roundId = round!.id
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

describe('the coordinator chooses how villages enter the model', () => {
  it('explains each choice, fits a village random intercept and reads the differences between villages', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto(`/signin?next=${encodeURIComponent('/models')}`)
    await page.getByLabel('E-mail').fill(demoUser('coordinator').email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(url => url.pathname === '/models')
    await page.goto(`/models?round=${roundId}`)
    await page.getByLabel('Distance to the nearest input dealer').check()
    await page.getByLabel('Contact with an extension officer last season?').check()
    // Each choice carries its sentence; the standard-error picker belongs to the first one only.
    await expect.poll(() => page.getByText('Give each village its own adoption level').isVisible()).toBe(true)
    expect(await page.getByText(/beyond the farm characteristics/).isVisible()).toBe(true)
    await page.getByLabel(/Give each village its own adoption level/).check()
    await expect.poll(() => page.getByLabel('Standard errors', { exact: true }).count()).toBe(0)
    await page.getByLabel(/Follow the sampling plan/).check()
    await expect.poll(() => page.getByLabel('Sampling weights', { exact: true }).isVisible()).toBe(true)
    await page.getByLabel(/Give each village its own adoption level/).check()
    await expect.poll(() => page.getByTestId('model-preview').textContent(), { timeout: 15_000 }).toMatch(/accepted visits will be used/)
    // 24 villages in the demo round: no few-villages warning.
    expect(await page.getByTestId('few-villages').count()).toBe(0)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-builder-villages.png'), fullPage: true })
    await page.getByRole('button', { name: 'Fit the model' }).click()
    await page.waitForURL(/\/models\/\d+$/)
    await expect.poll(() => page.getByTestId('village-model').count(), { timeout: 60_000 }).toBe(1)
    const card = await page.getByTestId('village-model').textContent()
    expect(card).toMatch(/Differences between villages/)
    expect(card).toMatch(/σ = \d\.\d+/)
    expect(card).toMatch(/ρ = \d\.\d+/)
    expect(await page.getByTestId('village-table').locator('tbody tr').count()).toBe(24)
    await page.getByTestId('village-model').scrollIntoViewIfNeeded()
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-results-villages.png'), fullPage: true })

    // A what-if on the village model: the result says what its overall and village figures rest on.
    await page.getByLabel('Scenario name').fill('extension everywhere')
    await page.getByLabel('Characteristic').selectOption({ label: 'Contact with an extension officer last season?' })
    await page.locator('#scenario-value').selectOption('yes')
    await page.getByRole('button', { name: 'Predict adoption under this scenario' }).click()
    const result = page.getByTestId('scenario-result').filter({ hasText: 'extension everywhere' })
    await expect.poll(() => result.count(), { timeout: 60_000 }).toBe(1)
    const text = await result.textContent()
    expect(text).toMatch(/a change of [\d.]+ points/)
    expect(text).toMatch(/averaged over how villages differ/)
    expect(text).toMatch(/starts from that village's own predicted level/)
    await result.scrollIntoViewIfNeeded()
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-results-village-scenario.png'), fullPage: true })
    await context.close()
  })

  it('a sampling plan with both checks: the builder offers them, the results read each one', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto(`/signin?next=${encodeURIComponent('/models')}`)
    await page.getByLabel('E-mail').fill(demoUser('coordinator').email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(url => url.pathname === '/models')
    await page.goto(`/models?round=${roundId}`)
    await page.getByLabel('Distance to the nearest input dealer').check()
    await page.getByLabel('Contact with an extension officer last season?').check()
    await page.getByLabel(/Follow the sampling plan/).check()
    await page.getByLabel('Sampling weights', { exact: true }).selectOption({ label: 'Household size' })
    await page.getByLabel(/Is the curve's shape right/).check()
    await page.getByLabel('Spread may change with Distance to the nearest input dealer').check()
    await expect.poll(() => page.getByTestId('model-preview').textContent(), { timeout: 15_000 }).toMatch(/accepted visits will be used/)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-builder-checks.png'), fullPage: true })
    await page.getByRole('button', { name: 'Fit the model' }).click()
    await page.waitForURL(/\/models\/\d+$/)
    await expect.poll(() => page.getByTestId('model-checks').count(), { timeout: 60_000 }).toBe(1)
    const checks = await page.getByTestId('model-checks').textContent()
    expect(checks).toMatch(/Is the curve's shape right\?/)
    expect(checks).toMatch(/squared index (adds|adds nothing)/)
    expect(checks).toMatch(/Does the unexplained spread change between farms\? χ² [\d.]+ on 1 df/)
    expect(checks).toMatch(/error variance changes with Distance to the nearest input dealer/)
    const summary = await page.getByTestId('fit-summary').textContent()
    expect(summary).toMatch(/Predicted against observed, ten groups, allowing for the sampling/)
    expect(summary).toMatch(/F [\d.]+ on \(9, 15\) df/)
    expect(summary).toMatch(/Archer–Lemeshow test for weighted samples/)
    expect(summary).not.toMatch(/Hosmer–Lemeshow test\)/)
    const warnings = await page.getByTestId('model-warnings').textContent()
    expect(warnings).toMatch(/Few sampled villages: only 24 sampled villages/)
    await page.getByTestId('model-checks').scrollIntoViewIfNeeded()
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-results-checks.png'), fullPage: true })
    await context.close()
  })
})
