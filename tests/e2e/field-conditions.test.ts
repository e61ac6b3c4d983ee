import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { Assignment, QuestionnaireVersion, Round, User, Village, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext, waitForApp } from '../support/browser'
import { DEMO, demoUser, freshClient } from '../support/server'
import { openFieldStore } from '../support/field-pin'
import { poll, useBrowser } from '../support/pages'

// The demo questionnaire asks "Where does the credit come from?" only when the farm has credit, and "Where did the
// household hear of the seed?" takes several answers. On a tablet with no network: the question appears and goes as
// the credit answer changes, several sources are ticked, the visits sync once back online, and review shows them.

const opened = useBrowser()

const NUMBERS: Record<string, string> = { farm_size_ha: '3.2', household_size: '5', schooling_years: '8', age_head: '38', dealer_distance_km: '6.5', livestock_tlu: '0.8' }
const YESNO: Record<string, boolean> = { adopted: true, female_head: true, extension_contact: false, group_member: true, owns_phone: true }
const CREDIT_QUESTION = 'Where does the credit come from?'

async function signIn(page: Page, role: string, next: string) {
  await page.goto(`/signin?next=${encodeURIComponent(next)}`)
  await waitForApp(page)
  await page.getByLabel('E-mail').fill(demoUser(role).email)
  await page.getByLabel('Password').fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === next.split('?')[0])
}

// The label reads "Where does the credit come from? *" (required when asked).
const creditQuestionShown = (page: Page) => page.getByText(CREDIT_QUESTION).count()
const setCredit = (page: Page, yes: boolean) => page.locator(`input[name="q-credit_access"][value="${yes}"]`).check({ force: true })
const tick = (page: Page, label: string) => page.getByTestId('several-heard_from').getByText(label, { exact: true }).click()

async function startVisit(page: Page, farmCode: string) {
  await page.getByRole('link', { name: 'New visit' }).first().click()
  await page.waitForURL(/\/field\/visit\?round=/)
  await page.getByRole('checkbox', { name: /informed consent/ }).check()
  await page.waitForURL(/\/field\/visit\?id=/)
  await page.getByLabel('Farm code *').fill(farmCode)
  await page.getByRole('button', { name: 'Record GPS position' }).click()
  await poll(() => page.getByTestId('gps-fix').count()).toBe(1)
  for (const [key, value] of Object.entries(NUMBERS)) await page.locator(`#q-${key}`).fill(value)
  for (const [key, value] of Object.entries(YESNO)) await page.locator(`input[name="q-${key}"][value="${value}"]`).check({ force: true })
}

async function saveVisit(page: Page) {
  await page.getByRole('button', { name: 'Save visit' }).click()
  await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
  await page.getByRole('link', { name: 'Back to field work' }).click()
  await page.waitForURL(url => url.pathname === '/field')
  await openFieldStore(page)
}

describe('conditions and several answers on a tablet with no network', () => {
  it('hides and shows the credit question as answers change, takes several sources, syncs once online, and review shows them', async () => {
    const enumerator = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const assignments = await Assignment.findAll({ where: { userId: enumerator!.id } })
    const village = await Village.findByPk(assignments[0]!.villageId)
    const context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    await context.grantPermissions(['geolocation'])
    await context.setGeolocation({ latitude: village!.centreLat, longitude: village!.centreLon, accuracy: 6 })
    const page = await context.newPage()
    await signIn(page, 'enumerator', '/field')
    await openFieldStore(page)
    await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)

    await context.setOffline(true)
    await page.reload()
    await openFieldStore(page)
    await poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Field work')
    const tag = Date.now().toString(36).toUpperCase()
    const [withCredit, withoutCredit] = [`COND-${tag}-1`, `COND-${tag}-2`]

    await startVisit(page, withCredit)
    // The coordinator's check across answers shows under the answer as soon as the answers break it.
    const checkMessage = 'Years of schooling must be fewer than the head\'s age: check both answers with the farmer.'
    await page.locator('#q-age_head').fill('20')
    await page.locator('#q-schooling_years').fill('24')
    await poll(() => page.locator('#q-schooling_years-error').textContent()).toBe(checkMessage)
    await page.locator('#q-schooling_years').fill(NUMBERS.schooling_years!)
    await page.locator('#q-age_head').fill(NUMBERS.age_head!)
    await poll(() => page.getByText(checkMessage).count()).toBe(0)
    // Credit not answered yet: the source is not asked.
    expect(await creditQuestionShown(page)).toBe(0)
    await setCredit(page, true)
    await poll(() => creditQuestionShown(page)).toBe(1)
    await page.locator('#q-credit_source').selectOption({ label: 'Village savings group' })
    // "No" hides it again and drops its answer; "Yes" brings it back empty.
    await setCredit(page, false)
    await poll(() => creditQuestionShown(page)).toBe(0)
    await setCredit(page, true)
    await poll(() => creditQuestionShown(page)).toBe(1)
    expect(await page.locator('#q-credit_source option:checked').textContent()).toContain('Choose')
    await page.locator('#q-credit_source').selectOption({ label: 'Input dealer on credit' })
    // Several sources: tick three, untick one.
    await tick(page, 'Radio programme')
    await tick(page, 'A neighbour')
    await tick(page, 'Field day')
    await tick(page, 'A neighbour')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-conditions-offline.png'), fullPage: true })
    await saveVisit(page)

    await startVisit(page, withoutCredit)
    await setCredit(page, false)
    await tick(page, 'Extension officer')
    expect(await creditQuestionShown(page)).toBe(0)
    await saveVisit(page)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent()).toBe('2')
    expect(await Visit.count({ where: { farmCode: [withCredit, withoutCredit] } })).toBe(0)

    // Back online: one sync pass stores both.
    await context.setOffline(false)
    await poll(() => page.getByTestId('count-waiting-to-sync').textContent(), 30_000).toBe('0')
    const stored = await Visit.findAll({ where: { farmCode: [withCredit, withoutCredit] } })
    expect(stored).toHaveLength(2)
    const first = stored.find(v => v.farmCode === withCredit)!
    const second = stored.find(v => v.farmCode === withoutCredit)!
    expect(first.answers).toMatchObject({ credit_access: true, credit_source: 'dealer_credit', heard_from: ['radio', 'field_day'] })
    expect(first.notAsked).toBeNull()
    expect(second.answers.credit_source).toBeUndefined()
    expect(second.notAsked).toEqual(['credit_source'])
    await context.close()

    // The coordinator's review shows the answers as words, and "Not asked" where the condition hid the question.
    const desk = await newTabletContext(opened.browser)
    const review = await desk.newPage()
    await signIn(review, 'coordinator', `/review?roundId=${first.roundId}`)
    const openFarm = async (code: string) => {
      await review.getByLabel('Farm code').fill(code)
      await poll(() => review.getByTestId('review-row').count()).toBe(1)
      // The filter applies after a pause: until then the single row may still be the farm opened before.
      await poll(() => review.getByTestId('review-row').first().textContent()).toContain(code)
      await review.getByTestId('review-row').first().click()
      await poll(() => review.getByTestId('review-panel').textContent()).toContain(`Farm ${code}`)
      return review.getByTestId('review-answers')
    }
    const answerOf = (answers: ReturnType<Page['getByTestId']>, question: string) =>
      answers.locator('div').filter({ has: review.getByText(question, { exact: true }) }).locator('dd').innerText()
    let answers = await openFarm(withCredit)
    expect(await answerOf(answers, CREDIT_QUESTION)).toBe('Input dealer on credit')
    expect(await answerOf(answers, 'Where did the household hear of the seed?')).toBe('Radio programme, Field day')
    await review.screenshot({ path: path.join(SCREENSHOTS, 'review-conditions.png'), fullPage: true })
    await review.keyboard.press('Escape')
    answers = await openFarm(withoutCredit)
    expect(await answerOf(answers, CREDIT_QUESTION)).toBe('Not asked')
    expect(await answerOf(answers, 'Where did the household hear of the seed?')).toBe('Extension officer')
    await desk.close()
  })

  it('builds a condition in the builder through its form, and names a later question and a repeated option code on save', async () => {
    const api = freshClient()
    await api.signIn(demoUser('coordinator').email)
    const created = await api.post<{ id: number }>('/api/rounds', { name: `Builder round ${Date.now().toString(36)}`, technology: 'hermetic storage bags', season: '2027 long rains' })
    expect(created.status).toBe(200)
    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    await signIn(page, 'coordinator', `/rounds/${created.body.id}?part=questionnaire`)
    await poll(() => page.getByTestId('builder-question').count()).toBe(1)

    // Two questions: access to credit (yes/no), then its source (one of a list), asked only with credit.
    await page.getByRole('button', { name: 'Add a question' }).click()
    await page.locator('#q1-label').fill('Access to credit?')
    await page.getByRole('button', { name: 'Add a question' }).click()
    await page.locator('#q2-label').fill('Credit source')
    await page.locator('#q2-type').selectOption({ label: 'One of a list' })
    await page.getByLabel('Answer 1', { exact: true }).fill('Bank')
    await page.getByLabel('Answer 2', { exact: true }).fill('Savings group')
    const third = page.getByTestId('builder-question').nth(2)
    await third.getByRole('button', { name: 'Ask only when earlier answers…' }).click()
    await third.getByLabel('Question tested (test 1)').selectOption({ label: 'Access to credit?' })
    await third.getByLabel('Comparison (test 1)').selectOption({ label: 'is' })
    await third.getByLabel('Value (test 1)').selectOption({ label: 'Yes' })
    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    await poll(() => page.getByRole('status').filter({ hasText: 'Saved as version' }).count()).toBe(1)
    const round = await Round.findByPk(created.body.id)
    const version = await QuestionnaireVersion.findByPk(round!.currentVersionId!)
    expect(version!.definition.questions[2]).toMatchObject({
      key: 'credit_source', askWhen: { join: 'all', tests: [{ question: 'access_to_credit', test: 'equals', value: true }] }
    })

    // The page reloads the round after a save (and redraws the list from it): move only once that is done.
    await page.waitForLoadState('networkidle')
    // Moved above the question it depends on: the save says what is wrong, under the question.
    await third.getByRole('button', { name: 'Up' }).click()
    await page.getByTestId('builder-question').nth(1).getByLabel('Code of answer 2').fill('bank')
    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    const moved = page.getByTestId('builder-question').nth(1)
    await poll(() => moved.innerText(), 20_000).toContain('The option code "bank" is used twice in "Credit source"; give each option its own code')
    expect(await moved.getByLabel('Question tested (test 1)').locator('option:checked').textContent()).toContain('Access to credit? (comes after this question)')
    await moved.getByLabel('Code of answer 2').fill('savings_group')
    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    await poll(() => moved.innerText(), 20_000).toContain('"Credit source" depends on "Access to credit?", which comes later: a condition may only use questions asked before it (move one of them)')
    expect(await moved.innerText()).not.toContain('is used twice')
    expect((await QuestionnaireVersion.findByPk(round!.currentVersionId!))!.definition.questions.map(q => q.key)).toEqual(['adopted', 'access_to_credit', 'credit_source'])
    await page.screenshot({ path: path.join(SCREENSHOTS, 'builder-conditions.png'), fullPage: true })

    // A check across answers with the coordinator's own message: the area sown at most the farm's size.
    await moved.getByRole('button', { name: 'Down' }).click()
    for (const [i, label] of [[3, 'Farm size'], [4, 'Area sown with the bags']] as const) {
      await page.getByRole('button', { name: 'Add a question' }).click()
      await page.locator(`#q${i}-label`).fill(label)
      await page.locator(`#q${i}-type`).selectOption({ label: 'Number (with unit)' })
    }
    await page.getByRole('button', { name: 'Add a check' }).click()
    const check = page.getByTestId('answer-check')
    await check.getByLabel('Answer checked (check 1)').selectOption({ label: 'Area sown with the bags' })
    await check.getByLabel('Comparison (check 1)').selectOption({ label: 'must be at most' })
    await check.getByLabel('Other answer (check 1)').selectOption({ label: 'Farm size' })
    await check.getByLabel('Message the enumerator reads when it fails').fill('The area sown cannot be larger than the farm.')
    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    await poll(async () => (await QuestionnaireVersion.findByPk(round!.currentVersionId!))!.definition.checks, 20_000).toEqual([
      { question: 'area_sown_with_the_bags', test: 'at_most', against: { question: 'farm_size' }, message: 'The area sown cannot be larger than the farm.' }
    ])
    await page.screenshot({ path: path.join(SCREENSHOTS, 'builder-checks.png'), fullPage: true })
    await context.close()
  })

  it('offers each answer of the several-answer question as a term, and says how many farms each treatment of "not asked" keeps', async () => {
    const demoRound = await Round.findOne({ order: [['id', 'ASC']] })
    const accepted = await Visit.findAll({ where: { roundId: demoRound!.id, reviewState: 'accepted' }, attributes: ['answers', 'notAsked'] })
    const answered = accepted.filter(v => typeof v.answers.credit_source === 'string').length
    const notAsked = accepted.filter(v => v.notAsked?.includes('credit_source')).length
    expect(notAsked).toBeGreaterThan(500)
    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    await signIn(page, 'coordinator', `/models?round=${demoRound!.id}`)
    const terms = page.getByTestId('several-terms-heard_from')
    await poll(() => terms.innerText()).toContain('one yes/no term per answer')
    await page.getByLabel('Where does the credit come from?').check()
    const choice = page.getByTestId('not-asked-cov-credit_source')
    await poll(() => choice.innerText()).toContain(`Of the accepted visits, ${answered} answered it and ${notAsked} were not asked.`)
    expect(await choice.innerText()).toMatch(new RegExp(`Count them as a group of their own \\("not asked"\\)\\s+— keeps ${answered + notAsked} farms`))
    expect(await choice.innerText()).toMatch(new RegExp(`Keep only the farms that were asked\\s+— keeps ${answered} farms`))
    // Until a choice is made, the preview says what is missing; with one, it counts the farms used.
    await poll(() => page.getByTestId('model-preview').innerText()).toContain('choose whether farms not asked count as 0 or are left out')
    await choice.getByLabel(/Keep only the farms that were asked/).check()
    await poll(() => page.getByTestId('model-preview').innerText()).toContain(`${answered} accepted visits will be used`)
    await choice.getByLabel(/Count them as a group of their own/).check()
    await poll(() => page.getByTestId('model-preview').innerText()).toContain(`${answered + notAsked} accepted visits will be used`)
    // Each ticked answer of the several-answer question is one yes/no term of the equation.
    await terms.getByLabel('Radio programme').check()
    await terms.getByLabel('Field day').check()
    await poll(() => page.getByTestId('model-preview').innerText()).toMatch(/β₅·Where did the household hear of the seed\?: Radio programme \+ β₆·Where did the household hear of the seed\?: Field day\)/)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'model-builder-several.png'), fullPage: true })
    await context.close()
  })
})
