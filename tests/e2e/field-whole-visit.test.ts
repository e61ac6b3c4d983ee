import path from 'node:path'
import type { Locator, Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { Assignment, AuditEntry, Round, SampleFarm, User, Village, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { openFieldStore } from '../support/field-pin'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser } from '../support/server'

// The whole tablet path of one field day, on a tablet with no network: a farm of the sample list is visited (started
// from the list) in the second language, conditions hide and show questions as answers change, two plots are added and
// one removed, another listed farm refuses with its reason; back online ONE sync sends it all. Review, in another
// browser, shows the answers in words, the plot row with its "not asked" question, the village's response rates with
// the refusal, and stores and audits a correction of the plot. Independent of other tests' data: the farms are picked
// among those still to visit, and the expected counts are read from the tables, never assumed.

const opened = useBrowser()
const LONG = 60_000

const NUMBERS: Record<string, string> = { farm_size_ha: '2.6', household_size: '6', schooling_years: '7', age_head: '44', dealer_distance_km: '9.5', livestock_tlu: '1.4' }
const YESNO: Record<string, boolean> = { adopted: true, female_head: true, extension_contact: true, group_member: false, owns_phone: true }
const CREDIT_SW = 'Mkopo unatoka wapi?'
const CREDIT_EN = 'Where does the credit come from?'
const REFUSAL = 'The head asked us to come after the harvest; declined today'

const farm = (page: Page, code: string) => page.locator(`[data-testid="sample-farm"][data-farm="${code}"]`)
const stateOf = async (page: Page, code: string) => (await farm(page, code).getByTestId('sample-farm-state').textContent())?.trim()
const labelOf = (page: Page, id: string) => page.locator(`label[for="${id}"]`).innerText()
const language = (page: Page, name: string) => page.getByTestId('field-language').getByRole('button', { name })

/** The text of whatever is on top at the middle of the element's left edge (what a person sees there). */
async function textOnTop(page: Page, locator: Locator): Promise<string | null | undefined> {
  await locator.scrollIntoViewIfNeeded()
  const box = (await locator.boundingBox())!
  return page.evaluate(([x, y]) => document.elementFromPoint(x!, y!)?.textContent?.trim(), [box.x + 3, box.y + box.height / 2])
}

/**
 * Two listed farms of the demo enumerator still to visit in the demo round: main-sample farms of one village if any
 * village has two left, otherwise any two still to visit (replacements already brought in, other villages), as many
 * runs on the same database use the demo's farms up.
 */
async function pickFarms() {
  const round = (await Round.findOne({ where: { name: 'Sorghum seed adoption, 2026 short rains' } }))!
  const enumerator = (await User.findOne({ where: { email: demoUser('enumerator').email } }))!
  const assignments = await Assignment.findAll({ where: { userId: enumerator.id, roundId: round.id }, order: [['villageId', 'DESC']] })
  const open: Array<{ code: string, villageId: number, main: boolean }> = []
  for (const a of assignments) {
    const farms = await SampleFarm.findAll({ where: { roundId: round.id, villageId: a.villageId }, order: [['sampleRank', 'ASC'], ['farmCode', 'ASC']] })
    const visited = new Set((await Visit.findAll({ where: { roundId: round.id, villageId: a.villageId }, attributes: ['farmCode'] })).map(v => v.farmCode))
    const brought = new Set(farms.map(f => f.replacedBy).filter(Boolean))
    for (const f of farms) {
      if (!f.outcome && !visited.has(f.farmCode) && (f.sampleRank === 0 || brought.has(f.farmCode))) open.push({ code: f.farmCode, villageId: a.villageId, main: f.sampleRank === 0 })
    }
  }
  const sameVillage = assignments.map(a => open.filter(f => f.villageId === a.villageId && f.main)).find(l => l.length >= 2)
  const [visit, refuse] = sameVillage ?? open
  if (!visit || !refuse) return null
  return {
    round,
    village: (await Village.findByPk(visit.villageId))!,
    refusalVillage: (await Village.findByPk(refuse.villageId))!,
    refusalIsMain: refuse.main,
    toVisit: visit.code,
    toRefuse: refuse.code
  }
}

describe('the whole tablet path of a field day, then review', () => {
  it('visits a listed farm in Kiswahili with conditions and plots, records a refusal, syncs once, and review shows and corrects it all', async () => {
    const pick = await pickFarms()
    expect(pick, 'two listed farms of the demo enumerator still to visit').not.toBeNull()
    const { round, village, refusalVillage, refusalIsMain, toVisit, toRefuse } = pick!

    const context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: village.centreLat, longitude: village.centreLon, accuracy: 6 })
    const page = await context.newPage()
    await signInPage(page, demoUser('enumerator').email, '/field')
    await openFieldStore(page)
    await poll(() => farm(page, toVisit).count(), LONG).toBe(1)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)

    // Offline from here to the sync.
    await context.setOffline(true)
    await page.reload()
    await openFieldStore(page)
    await poll(() => page.getByRole('heading', { level: 1 }).textContent(), LONG).toBe('Field work')
    await poll(() => stateOf(page, toVisit), LONG).toMatch(/^To visit/)
    expect(await stateOf(page, toRefuse)).toMatch(/^To visit/)

    // The visit starts from the list: its farm code is filled in and stays through the switch to Kiswahili.
    await farm(page, toVisit).getByRole('link', { name: 'Start visit' }).click()
    await page.waitForURL(url => url.pathname === '/field/visit' && url.searchParams.get('farm') === toVisit, { timeout: LONG })
    // Switched before consent (the visit is not on the tablet yet), then again once it is a draft.
    expect(await language(page, 'English').getAttribute('aria-pressed')).toBe('true')
    await language(page, 'Kiswahili').click()
    await poll(() => labelOf(page, 'q-farm_size_ha')).toBe('Ukubwa wa shamba * (hekta)')
    expect(await page.locator('#farm-code').inputValue()).toBe(toVisit)
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/, { timeout: LONG })
    expect(await page.locator('#farm-code').inputValue()).toBe(toVisit)
    await language(page, 'English').click()
    await poll(() => labelOf(page, 'q-farm_size_ha')).toBe('Farm size * (ha)')
    await language(page, 'Kiswahili').click()
    await poll(() => labelOf(page, 'q-farm_size_ha')).toBe('Ukubwa wa shamba * (hekta)')
    expect(await language(page, 'Kiswahili').getAttribute('aria-pressed')).toBe('true')
    expect(await page.locator('#farm-code').inputValue()).toBe(toVisit)
    expect(await page.locator('#village').inputValue()).not.toBe('')
    await page.getByRole('button', { name: 'Record GPS position' }).click()
    await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
    for (const [key, value] of Object.entries(NUMBERS)) await page.locator(`#q-${key}`).fill(value)
    for (const [key, value] of Object.entries(YESNO)) await page.locator(`input[name="q-${key}"][value="${value}"]`).check({ force: true })
    await page.getByTestId('several-heard_from').getByText('Kipindi cha redio', { exact: true }).click()
    await page.getByTestId('several-heard_from').getByText('Afisa ugani', { exact: true }).click()

    // Conditions: the credit source is asked only with credit, in Kiswahili, and goes again with "no".
    expect(await page.getByText(CREDIT_SW).count()).toBe(0)
    await page.locator('input[name="q-credit_access"][value="true"]').check({ force: true })
    await poll(() => page.getByText(CREDIT_SW).count()).toBe(1)
    expect(await page.getByText(CREDIT_EN).count()).toBe(0)
    await page.locator('#q-credit_source').selectOption({ label: 'Taasisi ya mikopo midogo' })
    await page.locator('input[name="q-credit_access"][value="false"]').check({ force: true })
    await poll(() => page.getByText(CREDIT_SW).count()).toBe(0)

    // The tablet is reloaded mid-visit (battery, a stray swipe): the draft comes back with its listed farm code, its
    // answers and the language chosen.
    await poll(() => page.evaluate(() => document.body.innerText.includes('Your answers are kept on this tablet as you type.'))).toBe(true)
    // The draft is written 0.3 s after the last change (encrypted, then stored): nothing on screen marks the write,
    // so a generous pause for a loaded machine.
    await page.waitForTimeout(2_500)
    await page.reload()
    await openFieldStore(page)
    await poll(() => labelOf(page, 'q-farm_size_ha'), LONG).toBe('Ukubwa wa shamba * (hekta)')
    expect(await page.locator('#farm-code').inputValue()).toBe(toVisit)
    expect(await page.locator('#q-livestock_tlu').inputValue()).toBe(NUMBERS.livestock_tlu)
    expect(await page.locator('input[name="q-credit_access"][value="false"]').isChecked()).toBe(true)

    // Two plots, in Kiswahili: the seed question appears on a plot only once "sown" is yes.
    const group = page.getByTestId('group-plots')
    await page.getByTestId('add-plots-row').click()
    await page.getByTestId('add-plots-row').click()
    await poll(() => group.getByTestId('plots-row').count()).toBe(2)
    expect(await group.locator('h3').innerText()).toMatch(/^Vipande vya shamba/)
    expect(await labelOf(page, 'q-plots-0-plot_size_ha')).toBe('Ukubwa wa kipande * (hekta)')
    await page.locator('#q-plots-0-plot_size_ha').fill('1.2')
    await page.locator('#q-plots-0-plot_soil').selectOption({ label: 'Udongo tifutifu' })
    await page.locator('input[name="q-plots-0-plot_sown"][value="false"]').check({ force: true })
    await page.locator('#q-plots-1-plot_soil').selectOption({ label: 'Udongo wa kichanga' })
    expect(await page.locator('#q-plots-1-plot_seed_kg').count()).toBe(0)
    await page.locator('input[name="q-plots-1-plot_sown"][value="true"]').check({ force: true })
    await poll(() => page.locator('#q-plots-1-plot_seed_kg').count()).toBe(1)
    expect(await labelOf(page, 'q-plots-1-plot_seed_kg')).toBe('Mbegu zilizopandwa kwenye kipande hiki (kg)')
    expect(await page.locator('#q-plots-0-plot_seed_kg').count()).toBe(0)
    // The second plot lacks its size: the problem is named for that row in the language on screen.
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(() => page.getByTestId('error-summary').innerText()).toContain('Vipande vya shamba, row 2: Ukubwa wa kipande')
    expect(await page.getByTestId('error-summary').innerText()).not.toContain('Plot size')
    await poll(() => page.locator('#q-plots-1-plot_size_ha-error').textContent()).toBe('This answer is required')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-whole-visit-kiswahili.png'), fullPage: true })
    // The second plot removed; the first keeps its answers and the visit saves.
    await page.getByRole('button', { name: 'Remove Vipande vya shamba, row 2' }).click()
    await poll(() => group.getByTestId('plots-row').count()).toBe(1)
    expect(await page.locator('#q-plots-0-plot_size_ha').inputValue()).toBe('1.2')
    expect((await page.locator('#q-plots-0-plot_soil option:checked').textContent())?.trim()).toBe('Udongo tifutifu')
    expect(await page.locator('#farm-code').inputValue()).toBe(toVisit)
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim(), LONG).toBe('Saved')
    await page.getByRole('link', { name: 'Back to field work' }).click()
    await page.waitForURL(url => url.pathname === '/field', { timeout: LONG })
    await openFieldStore(page)
    // The visited farms are folded away: opened as the enumerator would, to see the farm among them.
    await page.locator(`[data-testid="sample-village"][data-village="${village.name}"]`).getByTestId('sample-group-visited').locator('summary').click({ timeout: LONG })
    await poll(() => stateOf(page, toVisit), LONG).toMatch(/^Visited( · in place of [A-Z0-9-]+)?$/)

    // Another listed farm refused, with its reason.
    await farm(page, toRefuse).getByRole('button', { name: 'Not interviewed…' }).click()
    const form = page.getByRole('form', { name: `Why ${toRefuse} was not interviewed` })
    await form.getByLabel('Refused').check()
    await form.getByLabel('What happened').fill(REFUSAL)
    await form.getByRole('button', { name: 'Save the reason' }).click()
    await poll(() => stateOf(page, toRefuse)).toMatch(new RegExp(`^Refused .*waiting to sync · “${REFUSAL}”$`))
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent()).toBe('1')
    await farm(page, toRefuse).scrollIntoViewIfNeeded()
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-whole-visit-list.png') })
    expect(await Visit.count({ where: { farmCode: toVisit, roundId: round.id } })).toBe(0)
    expect((await SampleFarm.findOne({ where: { roundId: round.id, farmCode: toRefuse } }))!.outcome).toBeNull()

    // Back online: one sync sends the visit and the refusal (each in exactly one request).
    const sent: Array<{ url: string, body: string }> = []
    page.on('request', (r) => {
      if (r.method() === 'POST' && /\/api\/(sync\/visits|field\/sample-outcomes)/.test(r.url())) sent.push({ url: r.url(), body: r.postData() ?? '' })
    })
    await context.setOffline(false)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent(), LONG).toBe('0')
    await poll(() => stateOf(page, toRefuse), LONG).not.toContain('waiting to sync')
    expect(sent.filter(s => s.url.includes('/api/sync/visits') && s.body.includes(toVisit))).toHaveLength(1)
    expect(sent.filter(s => s.url.includes('/api/field/sample-outcomes') && s.body.includes(toRefuse))).toHaveLength(1)
    const stored = (await Visit.findOne({ where: { farmCode: toVisit, roundId: round.id } }))!
    expect(stored.answers).toMatchObject({ credit_access: false, heard_from: ['radio', 'extension_officer'], farm_size_ha: 2.6 })
    expect(stored.answers).not.toHaveProperty('credit_source')
    expect(stored.notAsked).toContain('credit_source')
    const plots = stored.answers.plots as Array<Record<string, unknown>>
    expect(plots).toHaveLength(1)
    expect(plots[0]).toMatchObject({ plot_size_ha: 1.2, plot_soil: 'loam', plot_sown: false })
    expect(plots[0]).not.toHaveProperty('plot_seed_kg')
    expect((await SampleFarm.findOne({ where: { roundId: round.id, farmCode: toRefuse } }))!).toMatchObject({ outcome: 'refused', outcomeNote: REFUSAL })
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-whole-visit-synced.png'), fullPage: true })
    await context.close()

    // Review, as the coordinator in another browser.
    const desk = await opened.browser.newContext({ baseURL: process.env.FURROWCAST_TEST_URL, viewport: { width: 1400, height: 1000 } })
    const review = await desk.newPage()
    await signInPage(review, demoUser('coordinator').email, `/review?roundId=${round.id}`)
    // The refused farm's village: its response rates count the refusal, as the tables do.
    const rates = review.getByTestId('review-sample-rates')
    await rates.locator('summary').click()
    const row = rates.locator('[data-testid="sample-rate-row"]').filter({ hasText: refusalVillage.name })
    const listed = await SampleFarm.findAll({ where: { roundId: round.id, villageId: refusalVillage.id } })
    const seen = new Set((await Visit.findAll({ where: { roundId: round.id, villageId: refusalVillage.id }, attributes: ['farmCode'] })).map(v => v.farmCode))
    const main = listed.filter(f => f.sampleRank === 0)
    const interviewed = main.filter(f => seen.has(f.farmCode)).length
    const refused = main.filter(f => !seen.has(f.farmCode) && f.outcome === 'refused').length
    if (refusalIsMain) expect(refused).toBeGreaterThanOrEqual(1)
    expect(listed.find(f => f.farmCode === toRefuse)).toMatchObject({ outcome: 'refused', outcomeNote: REFUSAL })
    expect(await Visit.count({ where: { roundId: round.id, farmCode: toVisit } })).toBe(1)
    await poll(async () => (await row.locator('td').allInnerTexts()).map(t => t.trim()).slice(4, 8), LONG)
      .toEqual([String(main.length), String(interviewed), `${Math.round(interviewed / main.length * 100)} %`, String(refused)])
    // Nothing covers the village's count of refusals (the visit's panel is not open yet).
    const refusedCell = row.locator('td').nth(7)
    expect(await textOnTop(review, refusedCell)).toBe(String(refused))
    await rates.screenshot({ path: path.join(SCREENSHOTS, 'review-whole-visit-rates.png') })

    await review.getByLabel('Farm code').fill(toVisit)
    await poll(() => review.getByTestId('review-row').first().textContent(), LONG).toContain(toVisit)
    await review.getByTestId('review-row').first().click()
    const panel = review.getByTestId('review-panel')
    await poll(() => panel.textContent(), LONG).toContain(`Farm ${toVisit}`)
    const answers = review.getByTestId('review-answers')
    // Codes in the main language's words; the hidden question as "Not asked", not as a missing answer.
    await poll(() => answers.innerText()).toContain('Radio programme, Extension officer')
    const credit = answers.locator('div').filter({ has: review.getByText(CREDIT_EN, { exact: true }) })
    expect((await credit.locator('dd').innerText()).trim()).toBe('Not asked')
    expect(await textOnTop(review, credit.locator('dd'))).toBe('Not asked')
    const table = review.getByTestId('review-rows-plots')
    expect(await table.locator('tbody tr').count()).toBe(1)
    const headers = (await table.locator('thead th').allInnerTexts()).map(t => t.trim())
    const cells = (await table.locator('tbody tr').first().locator('td').allInnerTexts()).map(t => t.trim())
    const cell = (header: string) => cells[headers.findIndex(h => h.startsWith(header))]
    expect(cell('Plot size')).toBe('1.2 ha')
    expect(cell('Main soil of the plot')).toBe('Loam')
    expect(cell('Was the seed sown on this plot?')).toBe('No')
    expect(cell('Seed sown on this plot')).toBe('Not asked')
    const seedCell = table.locator('tbody tr').first().locator('td').nth(headers.findIndex(h => h.startsWith('Seed sown on this plot')))
    expect(await textOnTop(review, seedCell)).toBe('Not asked')
    await review.screenshot({ path: path.join(SCREENSHOTS, 'review-whole-visit.png'), fullPage: true })

    // A correction of the plot: stored, shown row by row, and audited.
    await panel.getByRole('button', { name: 'Correct' }).click()
    await review.locator('#q-plots-0-plot_size_ha').fill('1.35')
    await review.locator('#review-reason').fill('Plot paced out again with the farmer on the second call')
    await panel.getByRole('button', { name: 'Save correction' }).click()
    await poll(async () => ((await Visit.findByPk(stored.id))!.answers.plots as Array<Record<string, unknown>>)[0]!.plot_size_ha, LONG).toBe(1.35)
    await poll(() => review.getByTestId('review-corrections').innerText(), LONG).toContain('Plots, row 1 · Plot size: 1.2 ha → 1.35 ha')
    await poll(() => review.getByTestId('review-rows-plots').innerText()).toContain('1.35 ha')
    expect(await review.getByTestId('review-rows-plots').innerText()).toContain('Not asked')
    const audit = await AuditEntry.findAll({ where: { action: 'visit.correct', entityType: 'visit', entityId: stored.id } })
    expect(audit).toHaveLength(1)
    expect(JSON.stringify(audit[0]!.details)).toContain('Plot paced out again with the farmer on the second call')
    await review.getByTestId('review-corrections').scrollIntoViewIfNeeded()
    await review.screenshot({ path: path.join(SCREENSHOTS, 'review-whole-visit-corrected.png') })
    await desk.close()
  }, 300_000)
})
