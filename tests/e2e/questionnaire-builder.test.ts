import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { User } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { watchConsole } from '../support/console'
import { makeRound } from '../support/field'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser, freshClient } from '../support/server'
import { openFieldStore } from '../support/field-pin'

// The coordinator adds a question to an open round's questionnaire: answers as rows, codes made from their words
// and editable, saved as a new version, then seen in the builder and on the tablet.
const opened = useBrowser()

describe('the questionnaire builder', () => {
  it('adds a question with answer rows, makes codes that can be edited, saves version 2 and shows it', async () => {
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const round = await makeRound(coordinator, me!.id)

    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    const problems = watchConsole(page)
    await signInPage(page, demoUser('coordinator').email, `/rounds/${round.roundId}?part=questionnaire`)
    await poll(() => page.getByRole('heading', { name: /Questionnaire/ }).innerText()).toContain('version 1')
    const before = await page.getByTestId('builder-question').count()
    await page.getByRole('button', { name: 'Add a question' }).click()
    const added = page.getByTestId('builder-question').nth(before)
    await added.getByLabel('Question, as the enumerator reads it').fill('Main source of seed this season')
    // The code is made from the words as they are typed.
    const code = added.getByLabel('Code in the data and exports')
    await poll(() => code.inputValue()).toBe('main_source_of_seed_this_season')
    await code.fill('seed_source')
    await added.getByLabel('Kind of answer').selectOption({ label: 'One of a list' })
    const answers = added.getByTestId('choice-option')
    await poll(() => answers.count()).toBe(2)
    await added.getByLabel('Answer 1', { exact: true }).fill('Own saved seed')
    await added.getByLabel('Answer 2', { exact: true }).fill('Agro-dealer shop')
    await added.getByRole('button', { name: 'Add an answer' }).click()
    await added.getByLabel('Answer 3', { exact: true }).fill('Neighbour')
    expect(await added.getByLabel('Code of answer 1').inputValue()).toBe('own_saved_seed')
    expect(await added.getByLabel('Code of answer 2').inputValue()).toBe('agro_dealer_shop')
    // A code edited by hand stays as it is when the words change afterwards.
    await added.getByLabel('Code of answer 3').fill('kin')
    await added.getByLabel('Answer 3', { exact: true }).fill('Neighbour or relative')
    expect(await added.getByLabel('Code of answer 3').inputValue()).toBe('kin')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'builder-new-question.png'), fullPage: true })

    await page.getByRole('button', { name: 'Save questionnaire' }).click()
    await poll(() => page.getByRole('status').filter({ hasText: 'Saved as version' }).innerText()).toBe('Saved as version 2.')
    // After a reload the builder shows version 2 with the question and its answers as saved.
    await page.reload()
    await poll(() => page.getByRole('heading', { name: /Questionnaire/ }).innerText()).toContain('version 2')
    const saved = page.getByTestId('builder-question').nth(before)
    await poll(() => saved.getByLabel('Question, as the enumerator reads it').inputValue()).toBe('Main source of seed this season')
    expect(await saved.getByLabel('Code in the data and exports').inputValue()).toBe('seed_source')
    // Saved codes are answered by visits: no longer editable.
    expect(await saved.getByLabel('Code in the data and exports').isDisabled()).toBe(true)
    const rows = saved.getByTestId('choice-option')
    expect(await rows.count()).toBe(3)
    expect(await saved.getByLabel('Answer 3', { exact: true }).inputValue()).toBe('Neighbour or relative')
    expect(await saved.getByLabel('Code of answer 3').inputValue()).toBe('kin')
    await saved.screenshot({ path: path.join(SCREENSHOTS, 'builder-version-2.png') })
    expect(problems).toEqual([])
    await context.close()

    // On the tablet, the new visit form asks the new question with its answers.
    const tablet = await newTabletContext(opened.browser)
    const field = await tablet.newPage()
    await field.setViewportSize({ width: 820, height: 1180 })
    await signInPage(field, demoUser('enumerator').email, '/field')
    await openFieldStore(field)
    await poll(() => field.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
    await field.goto(`/field/visit?round=${round.roundId}&village=${round.assignedVillageId}`)
    await openFieldStore(field)
    // A list question is a drop-down under its label, its answers in the builder's order.
    const question = field.getByLabel('Main source of seed this season')
    await poll(() => question.locator('option').allInnerTexts(), 15_000).toEqual(expect.arrayContaining(['Own saved seed', 'Agro-dealer shop', 'Neighbour or relative']))
    await field.getByRole('checkbox', { name: /informed consent/ }).check()
    await question.selectOption({ label: 'Neighbour or relative' })
    expect(await question.inputValue()).toBe('kin')
    await question.screenshot({ path: path.join(SCREENSHOTS, 'builder-question-on-tablet.png') })
    await tablet.close()
  }, 120_000)
})
