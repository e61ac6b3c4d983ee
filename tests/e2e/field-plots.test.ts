import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { Assignment, QuestionnaireVersion, Round, User, Village, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { openFieldStore } from '../support/field-pin'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser, freshClient } from '../support/server'

// The demo questionnaire's plots on a tablet with no network: two plots added, a row's missing answer named for that
// row and field, one plot removed, the visit saved and synced once back online; review shows the remaining plot and a
// coordinator corrects it (the correction reads row by row). Then the builder adds a group, and the model page fits
// a plot-level model on the demo's plots.

const opened = useBrowser()

const NUMBERS: Record<string, string> = { farm_size_ha: '2.0', household_size: '5', schooling_years: '8', age_head: '38', dealer_distance_km: '6.5', livestock_tlu: '0.8' }
const YESNO: Record<string, boolean> = { adopted: true, female_head: false, extension_contact: false, credit_access: false, group_member: true, owns_phone: true }

async function signIn(page: Page, role: string, next: string) {
  await signInPage(page, demoUser(role).email, next)
  // The tablet's store is encrypted: opened with the PIN wherever the field app was just opened.
  if (next.startsWith('/field')) await openFieldStore(page)
}

describe('plots on a tablet with no network, then review', () => {
  it('adds two plots, names a row\'s missing answer, removes one, syncs once online, and review shows and corrects the plot', async () => {
    const enumerator = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const assignments = await Assignment.findAll({ where: { userId: enumerator!.id } })
    const village = await Village.findByPk(assignments[0]!.villageId)
    const context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: village!.centreLat, longitude: village!.centreLon, accuracy: 6 })
    const page = await context.newPage()
    await signIn(page, 'enumerator', '/field')
    await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)

    await context.setOffline(true)
    await page.reload()
    await openFieldStore(page)
    await poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Field work')
    const farmCode = `PLOT-${Date.now().toString(36).toUpperCase()}`
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.waitForURL(/\/field\/visit\?round=/)
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await page.getByLabel('Farm code *').fill(farmCode)
    await page.getByRole('button', { name: 'Record GPS position' }).click()
    await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
    for (const [key, value] of Object.entries(NUMBERS)) await page.locator(`#q-${key}`).fill(value)
    for (const [key, value] of Object.entries(YESNO)) await page.locator(`input[name="q-${key}"][value="${value}"]`).check({ force: true })

    // Two plots: the first complete (the seed question appears only once "sown" is yes), the second without its size.
    const group = page.getByTestId('group-plots')
    await page.getByTestId('add-plots-row').click()
    await page.getByTestId('add-plots-row').click()
    await poll(() => group.getByTestId('plots-row').count()).toBe(2)
    expect(await page.locator('#q-plots-0-plot_seed_kg').count()).toBe(0)
    await page.locator('#q-plots-0-plot_size_ha').fill('1.2')
    await page.locator('#q-plots-0-plot_soil').selectOption({ label: 'Loam' })
    await page.locator('input[name="q-plots-0-plot_sown"][value="true"]').check({ force: true })
    await poll(() => page.locator('#q-plots-0-plot_seed_kg').count()).toBe(1)
    await page.locator('#q-plots-0-plot_seed_kg').fill('9.5')
    await page.locator('#q-plots-1-plot_soil').selectOption({ label: 'Sandy' })
    await page.locator('input[name="q-plots-1-plot_sown"][value="false"]').check({ force: true })
    await page.getByRole('button', { name: 'Save visit' }).click()
    // The problem is named for that row and field, at the top and under the field.
    await poll(() => page.getByTestId('error-summary').innerText()).toContain('Plots, row 2: Plot size')
    await poll(() => page.locator('#q-plots-1-plot_size_ha-error').textContent()).toBe('This answer is required')
    expect(await page.locator('#q-plots-0-plot_size_ha-error').count()).toBe(0)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-plots-offline.png'), fullPage: true })

    // The first plot removed: the second becomes row 1 and keeps its answers; its size given, the visit saves.
    await page.getByRole('button', { name: 'Remove Plots, row 1' }).click()
    await poll(() => group.getByTestId('plots-row').count()).toBe(1)
    expect(await page.locator('#q-plots-0-plot_soil option:checked').textContent()).toBe('Sandy')
    await page.locator('#q-plots-0-plot_size_ha').fill('0.8')
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    await page.getByRole('link', { name: 'Back to field work' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent()).toBe('1')
    expect(await Visit.count({ where: { farmCode } })).toBe(0)

    await context.setOffline(false)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent(), 30_000).toBe('0')
    const stored = await Visit.findOne({ where: { farmCode } })
    const plots = stored!.answers.plots as Array<Record<string, unknown>>
    expect(plots).toHaveLength(1)
    expect(plots[0]).toMatchObject({ plot_size_ha: 0.8, plot_soil: 'sandy', plot_sown: false })
    expect(plots[0]!.row).toMatch(/^[0-9a-f-]{36}$/)
    // The synced visit opens as a record to read, its plot included.
    const row = page.getByTestId('local-visit').filter({ hasText: farmCode })
    await poll(() => row.getAttribute('data-state'), 30_000).toBe('synced')
    await row.getByRole('link').click()
    await poll(() => page.getByTestId('read-only-plots').innerText()).toContain('Plots, row 1 — Plot size: 0.8 ha · Main soil of the plot: Sandy · Was the seed sown on this plot?: No')
    await context.close()

    // Review: the remaining plot as a table; a correction of its size, read back row by row.
    const desk = await newTabletContext(opened.browser)
    const review = await desk.newPage()
    await signIn(review, 'coordinator', `/review?roundId=${stored!.roundId}`)
    await review.getByLabel('Farm code').fill(farmCode)
    await poll(() => review.getByTestId('review-row').first().textContent()).toContain(farmCode)
    await review.getByTestId('review-row').first().click()
    const panel = review.getByTestId('review-panel')
    await poll(() => panel.textContent()).toContain(`Farm ${farmCode}`)
    const table = review.getByTestId('review-rows-plots')
    await poll(() => table.innerText()).toContain('0.8 ha')
    expect(await table.innerText()).toContain('Sandy')
    expect(await table.locator('tbody tr').count()).toBe(1)
    await panel.getByRole('button', { name: 'Correct' }).click()
    await review.locator('#q-plots-0-plot_size_ha').fill('0.9')
    await review.locator('#review-reason').fill('Plot paced out again with the farmer')
    await panel.getByRole('button', { name: 'Save correction' }).click()
    await poll(async () => ((await Visit.findOne({ where: { farmCode } }))!.answers.plots as Array<Record<string, unknown>>)[0]!.plot_size_ha).toBe(0.9)
    await poll(() => review.getByText(`Farm ${farmCode} corrected`).count()).toBeGreaterThan(0)
    // The panel stays open on the corrected visit, which now lists the correction.
    await poll(() => review.getByTestId('review-corrections').innerText(), 15_000).toContain('Plots, row 1 · Plot size: 0.8 ha → 0.9 ha')
    await poll(() => review.getByTestId('review-rows-plots').innerText()).toContain('0.9 ha')
    await review.getByTestId('review-corrections').scrollIntoViewIfNeeded()
    await review.screenshot({ path: path.join(SCREENSHOTS, 'review-plots.png') })
    await desk.close()
  })

  it('adds a group of repeated questions in the builder and saves it', async () => {
    const api = freshClient()
    await api.signIn(demoUser('coordinator').email)
    const created = await api.post<{ id: number }>('/api/rounds', { name: `Plots round ${Date.now().toString(36)}`, technology: 'mulch ripping', season: '2027 long rains' })
    expect(created.status).toBe(200)
    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    await signIn(page, 'coordinator', `/rounds/${created.body.id}?part=questionnaire`)
    await poll(() => page.getByTestId('builder-question').count()).toBe(1)
    await page.getByRole('button', { name: 'Add repeated questions (e.g. plots)' }).click()
    const group = page.getByTestId('builder-group')
    await group.getByLabel('Name of the group, as the enumerator reads it').fill('Fields')
    await group.getByLabel('Fewest rows per farm (optional)').fill('1')
    await group.getByTestId('builder-group-question').first().getByLabel('Question, as the enumerator reads it').fill('Field size')
    await group.getByRole('button', { name: 'Add a question to Fields' }).click()
    const second = group.getByTestId('builder-group-question').nth(1)
    await second.getByLabel('Question, as the enumerator reads it').fill('Ripped this season?')
    await second.locator('select').first().selectOption({ label: 'Yes / no' })
    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    await poll(() => page.getByRole('status').filter({ hasText: 'Saved as version' }).count()).toBe(1)
    const round = await Round.findByPk(created.body.id)
    const version = await QuestionnaireVersion.findByPk(round!.currentVersionId!)
    expect(version!.definition.groups).toMatchObject([{ key: 'fields', label: 'Fields', minRows: 1, questions: [{ key: 'field_size', type: 'number' }, { key: 'ripped_this_season', type: 'yesno' }] }])
    await page.screenshot({ path: path.join(SCREENSHOTS, 'builder-plots.png'), fullPage: true })

    // A question key used twice (here inside the group and at the top) is named under the group's question.
    await page.waitForLoadState('networkidle')
    await group.getByTestId('builder-group-question').first().getByLabel('Code in the data and exports').fill('adopted')
    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    await poll(() => group.innerText(), 20_000).toContain('The key adopted is used twice')
    await context.close()
  })

  it('fits a plot-level model on the demo\'s plots from the model page and says how many rows it keeps', async () => {
    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    const demoRound = await Round.findOne({ where: { name: 'Sorghum seed adoption, 2026 short rains' } })
    await signIn(page, 'coordinator', `/models?round=${demoRound!.id}`)
    const panel = page.getByTestId('plot-model-panel')
    await poll(() => panel.count(), 20_000).toBe(1)
    await panel.getByRole('button', { name: 'Build a model from Plots' }).click()
    await panel.getByLabel('Outcome of each row (a yes/no question)').selectOption({ label: 'Was the seed sown on this plot?' })
    await panel.getByLabel('Plot size').check()
    await panel.getByLabel('Main soil of the plot').check()
    await panel.getByRole('button', { name: 'Fit this model' }).click()
    await poll(() => panel.getByTestId('plot-model-kept').innerText(), 30_000).toMatch(/the fit keeps \d+/)
    const coefficients = await panel.getByTestId('plot-model-coefficients').innerText()
    expect(coefficients).toContain('Plot size')
    expect(coefficients).toMatch(/Main soil of the plot/)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-plots.png'), fullPage: true })
    await context.close()
  })
})
