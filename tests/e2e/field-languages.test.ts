import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { Assignment, QuestionnaireVersion, Round, User, Village, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { openFieldStore } from '../support/field-pin'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser, freshClient } from '../support/server'

// The demo round is asked in English and Kiswahili. On a tablet with no network the enumerator switches to Kiswahili
// in the middle of a visit: the questions, units, answers of a list and the coordinator's check message change on
// screen, the answers already given stay, the visit is saved with codes and synced once online; the next visit opens in
// the language chosen (remembered on the device). In the builder, a missing translation is listed and refuses the save.
const opened = useBrowser()

const NUMBERS: Record<string, string> = { farm_size_ha: '3.2', household_size: '5', schooling_years: '8', age_head: '38', dealer_distance_km: '6.5', livestock_tlu: '0.8' }
const YESNO: Record<string, boolean> = { adopted: true, female_head: false, extension_contact: true, group_member: true, owns_phone: true }
const CHECK_EN = 'Years of schooling must be fewer than the head\'s age: check both answers with the farmer.'
const CHECK_SW = 'Miaka ya shule lazima iwe chini ya umri wa mkuu wa kaya: hakikisha majibu yote mawili na mkulima.'

const labelOf = (page: Page, key: string) => page.locator(`label[for="q-${key}"]`).innerText()
const language = (page: Page, name: string) => page.getByTestId('field-language').getByRole('button', { name })

describe('a questionnaire in two languages', () => {
  it('switches to Kiswahili mid-visit offline: labels, options and the check message change, answers are codes and sync', async () => {
    const enumerator = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const assignments = await Assignment.findAll({ where: { userId: enumerator!.id } })
    const village = await Village.findByPk(assignments[0]!.villageId)
    const context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: village!.centreLat, longitude: village!.centreLon, accuracy: 6 })
    const page = await context.newPage()
    await signInPage(page, demoUser('enumerator').email, '/field')
    await openFieldStore(page)
    await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)

    await context.setOffline(true)
    await page.reload()
    await openFieldStore(page)
    await poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Field work')
    const farm = `LANG-${Date.now().toString(36).toUpperCase()}`
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.waitForURL(/\/field\/visit\?round=/)
    // English first (the main language), with the switch on screen.
    expect(await language(page, 'English').getAttribute('aria-pressed')).toBe('true')
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await page.getByLabel('Farm code *').fill(farm)
    await page.getByRole('button', { name: 'Record GPS position' }).click()
    await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
    for (const [key, value] of Object.entries(NUMBERS)) await page.locator(`#q-${key}`).fill(value)
    for (const [key, value] of Object.entries(YESNO)) await page.locator(`input[name="q-${key}"][value="${value}"]`).check({ force: true })
    await page.locator('input[name="q-credit_access"][value="true"]').check({ force: true })
    await page.locator('#q-credit_source').selectOption({ label: 'Village savings group' })
    // Break the coordinator's check: its message shows in English.
    await page.locator('#q-schooling_years').fill('40')
    await poll(() => page.locator('#q-schooling_years-error').textContent()).toBe(CHECK_EN)
    expect(await labelOf(page, 'farm_size_ha')).toBe('Farm size * (ha)')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-language-english.png'), fullPage: true })

    // Mid-visit, still offline: Kiswahili.
    await language(page, 'Kiswahili').click()
    await poll(() => labelOf(page, 'farm_size_ha')).toBe('Ukubwa wa shamba * (hekta)')
    expect(await language(page, 'Kiswahili').getAttribute('aria-pressed')).toBe('true')
    expect(await page.locator('#q-schooling_years-error').textContent()).toBe(CHECK_SW)
    expect(await page.getByText(CHECK_EN).count()).toBe(0)
    expect(await page.getByText('Je, kaya inaongozwa na mwanamke?').count()).toBe(1)
    expect(await page.getByText('Watu wanaokula kutoka chungu kimoja.').count()).toBe(1)
    // The answer chosen in English stays chosen, now in Kiswahili words; the other answers of the list too.
    expect((await page.locator('#q-credit_source option:checked').textContent())?.trim()).toBe('Kikundi cha kuweka akiba cha kijiji')
    expect(await page.locator('#q-credit_source option').allTextContents()).toContain('Taasisi ya mikopo midogo')
    expect(await page.locator('#q-farm_size_ha').inputValue()).toBe('3.2')
    await page.getByTestId('several-heard_from').getByText('Kipindi cha redio', { exact: true }).click()
    await page.getByTestId('several-heard_from').getByText('Afisa ugani', { exact: true }).click()
    await page.locator('#q-credit_source').selectOption({ label: 'Taasisi ya mikopo midogo' })
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-language-kiswahili.png'), fullPage: true })
    // What is on top at the check message's place is the Kiswahili message itself.
    await page.locator('#q-schooling_years-error').scrollIntoViewIfNeeded()
    const box = (await page.locator('#q-schooling_years-error').boundingBox())!
    expect(await page.evaluate(([x, y]) => document.elementFromPoint(x!, y!)?.textContent, [box.x + 4, box.y + box.height / 2])).toBe(CHECK_SW)

    await page.locator('#q-schooling_years').fill(NUMBERS.schooling_years!)
    await poll(() => page.getByText(CHECK_SW).count()).toBe(0)
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    await page.getByRole('link', { name: 'Back to field work' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent()).toBe('1')

    // The device remembers the language: after a reload, a new visit opens in Kiswahili.
    await page.reload()
    await openFieldStore(page)
    await poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Field work')
    await page.getByRole('link', { name: 'New visit' }).first().click()
    await page.waitForURL(/\/field\/visit\?round=/)
    await poll(() => page.getByText('Ukubwa wa shamba').count()).toBe(1)
    expect(await language(page, 'Kiswahili').getAttribute('aria-pressed')).toBe('true')
    await page.getByRole('link', { name: 'Back' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    expect(await Visit.count({ where: { farmCode: farm } })).toBe(0)

    // Online again: one sync stores codes, never words.
    await context.setOffline(false)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent(), 30_000).toBe('0')
    const stored = await Visit.findOne({ where: { farmCode: farm } })
    expect(stored!.answers).toMatchObject({ credit_access: true, credit_source: 'microlender', heard_from: ['radio', 'extension_officer'], farm_size_ha: 3.2, female_head: false })
    await context.close()

    // Review shows the main language's words for the same codes.
    const desk = await newTabletContext(opened.browser)
    const review = await desk.newPage()
    await signInPage(review, demoUser('coordinator').email, `/review?roundId=${stored!.roundId}`)
    await review.getByLabel('Farm code').fill(farm)
    await poll(() => review.getByTestId('review-row').first().textContent()).toContain(farm)
    await review.getByTestId('review-row').first().click()
    const answers = review.getByTestId('review-answers')
    await poll(() => answers.innerText()).toContain('Microfinance lender')
    expect(await answers.innerText()).toContain('Radio programme, Extension officer')
    await desk.close()
  })

  it('lists a missing translation in the builder, refuses the save with a clear message, then saves when complete', async () => {
    const api = freshClient()
    await api.signIn(demoUser('coordinator').email)
    const created = await api.post<{ id: number }>('/api/rounds', { name: `Languages ${Date.now().toString(36)}`, technology: 'hermetic storage bags', season: '2027 long rains' })
    expect(created.status).toBe(200)
    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    await signInPage(page, demoUser('coordinator').email, `/rounds/${created.body.id}?part=questionnaire`)
    await poll(() => page.getByTestId('builder-question').count()).toBe(1)
    await page.getByRole('button', { name: 'Add a question' }).click()
    await page.locator('#q1-label').fill('Where are the bags kept?')
    await page.locator('#q1-type').selectOption({ label: 'One of a list' })
    await page.getByLabel('Answer 1', { exact: true }).fill('In the house')
    await page.getByLabel('Answer 2', { exact: true }).fill('In a granary')

    await page.getByRole('button', { name: 'Ask in more than one language' }).click()
    await page.getByLabel('Language 2: tag').fill('sw')
    await page.getByLabel('Language 2: name').fill('Kiswahili')
    const missing = page.getByTestId('missing-sw')
    // The adoption question (text and guidance), the new question and its two answers.
    await poll(() => missing.innerText()).toContain('Kiswahili: 5 texts are missing')
    const table = page.getByTestId('translations-sw')
    await table.getByLabel('Where are the bags kept?').fill('Mifuko inahifadhiwa wapi?')
    await table.getByLabel('Answer: In the house').fill('Ndani ya nyumba')
    await table.getByLabel('Answer: In a granary').fill('Ghalani')
    await poll(() => missing.innerText()).toContain('Kiswahili: 2 texts are missing')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'builder-languages-missing.png'), fullPage: true })
    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    await poll(() => page.getByRole('alert').filter({ hasText: 'Not saved' }).innerText()).toContain('A translation is missing or refused: see Languages.')
    // The server's message sits under the very input that lacks its text.
    const outcomeRow = table.getByTestId('translation-adopted')
    await poll(() => outcomeRow.innerText()).toContain('Kiswahili (sw): no text for "Has this farm adopted hermetic storage bags this season?"')
    const round = await Round.findByPk(created.body.id)
    expect((await QuestionnaireVersion.findByPk(round!.currentVersionId!))!.definition.languages).toBeUndefined()

    await outcomeRow.getByRole('textbox').nth(0).fill('Je, shamba hili limetumia mifuko isiyopitisha hewa msimu huu?')
    await outcomeRow.getByRole('textbox').nth(1).fill('Jibu ndiyo ikiwa tu shamba liliitumia msimu huu.')
    await poll(() => missing.innerText()).toBe('Kiswahili: every text is translated.')
    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    await poll(() => page.getByRole('status').filter({ hasText: 'Saved as version' }).count()).toBe(1)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'builder-languages-saved.png'), fullPage: true })
    const version = await QuestionnaireVersion.findByPk(round!.currentVersionId!)
    expect(version!.definition.languages).toEqual([{ code: 'en', name: 'English' }, { code: 'sw', name: 'Kiswahili' }])
    expect(version!.definition.translations!.sw!.where_are_the_bags_kept).toEqual({ label: 'Mifuko inahifadhiwa wapi?', options: { in_the_house: 'Ndani ya nyumba', in_a_granary: 'Ghalani' } })

    // The demo round, open and complete in Kiswahili: each text beside its English one, the check's message too.
    const demo = await Round.findOne({ where: { name: 'Sorghum seed adoption, 2026 short rains' } })
    await page.goto(`/rounds/${demo!.id}?part=questionnaire`)
    await poll(() => page.getByTestId('missing-sw').innerText(), 20_000).toBe('Kiswahili: every text is translated.')
    // Complete, the texts stay folded until asked for (a long page otherwise); one button opens them.
    expect(await page.getByTestId('translations-sw').count()).toBe(0)
    await page.getByRole('group', { name: 'Texts of' }).getByRole('button', { name: 'Kiswahili' }).click()
    const demoTable = page.getByTestId('translations-sw')
    expect(await demoTable.getByLabel('Answer: Microfinance lender').inputValue()).toBe('Taasisi ya mikopo midogo')
    expect(await demoTable.getByTestId('translation-check-0').getByRole('textbox').inputValue()).toMatch(/^Miaka ya shule/)
    expect(await demoTable.getByTestId('translation-plot_soil').getByLabel('Answer: Loam').inputValue()).toBe('Udongo tifutifu')
    await page.getByTestId('builder-languages').screenshot({ path: path.join(SCREENSHOTS, 'builder-languages-demo.png') })
    await context.close()
  })
})
