import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext } from '../support/browser'
import { User, Visit } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { watchConsole } from '../support/console'
import { type TestRound, makeRound } from '../support/field'
import { DEMO, baseUrl, demoUser, freshClient } from '../support/server'

let browser: Browser
let round: TestRound
let villageCode = ''

beforeAll(async () => {
  baseUrl()
  testDatabase()
  const coordinator = freshClient()
  await coordinator.signIn(demoUser('coordinator').email)
  const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
  round = await makeRound(coordinator, me!.id)
  const detail = await coordinator.get<{ villages: Array<{ id: number, code: string }> }>(`/api/rounds/${round.roundId}`)
  villageCode = detail.body.villages.find(v => v.id === round.assignedVillageId)!.code
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

async function signIn(page: Page, role: string, next: string) {
  await page.goto(`/signin?next=${encodeURIComponent(next)}`)
  await page.getByLabel('E-mail').fill(demoUser(role).email)
  await page.getByLabel('Password').fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === next)
}

describe('the coordinator imports past survey data from a CSV file', () => {
  it('sees the bad row, imports the valid rows only and sees the count', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    const next = `/rounds/${round.roundId}/import`
    await signIn(page, 'coordinator', next)
    await expect.poll(() => page.getByLabel('CSV file').isEnabled(), { timeout: 15_000 }).toBe(true)
    const csv = [
      'farm_code,village,adopted,farm_size_ha,household_size',
      `E2E-1,${villageCode},yes,2.5,6`,
      `E2E-2,${villageCode},no,1.5,4`,
      `E2E-3,${villageCode},yes,lots,5`
    ].join('\n')
    await page.getByLabel('CSV file').setInputFiles({ name: 'last-season.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) })
    await expect.poll(() => page.getByTestId('import-file-summary').textContent()).toContain('3 rows, 5 columns separated by commas')
    // Pre-filled where the header names the question key or the farm and village.
    expect(await page.getByLabel('Farm code').inputValue()).toBe('farm_code')
    expect(await page.getByLabel('Village code').inputValue()).toBe('village')
    expect(await page.locator('#map-farm_size_ha').inputValue()).toBe('farm_size_ha')
    await page.getByRole('button', { name: 'Check the rows' }).click()
    await expect.poll(() => page.getByTestId('import-counts').textContent()).toContain('3 rows: 2 pass the checks, 1 do not')
    const problems = await page.getByTestId('import-problem').allTextContents()
    expect(problems).toHaveLength(1)
    // The problem names the question by its label; the column is the file's own header.
    expect(problems[0]).toMatch(/4\s*Farm size\s*farm_size_ha\s*Enter a number \(found "lots"\)/)

    await page.getByRole('button', { name: 'Import', exact: true }).click()
    await expect.poll(() => page.getByTestId('import-outcome').textContent()).toMatch(/Nothing was imported: 1 of 3 rows have problems/)
    expect(await Visit.count({ where: { roundId: round.roundId, source: 'import' } })).toBe(0)

    await page.getByLabel('Import the rows that pass').check()
    await page.getByRole('button', { name: 'Import', exact: true }).click()
    await expect.poll(() => page.getByTestId('import-outcome').textContent()).toMatch(/Imported 2 of 3 rows; 1 rejected/)
    expect(await page.getByRole('link', { name: 'Download the rejected rows (CSV)' }).getAttribute('download')).toBe('rejected-last-season.csv')
    expect(await Visit.count({ where: { roundId: round.roundId, source: 'import' } })).toBe(2)
    await page.screenshot({ path: `${SCREENSHOTS}/csv-import.png`, fullPage: true })
    await context.close()
  })

  it('reads decimal commas in a semicolon file, takes a visit-date column and sends repeated farm codes to review', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    const problemsLogged = watchConsole(page)
    const next = `/rounds/${round.roundId}/import`
    await signIn(page, 'coordinator', next)
    await expect.poll(() => page.getByLabel('CSV file').isEnabled(), { timeout: 15_000 }).toBe(true)
    const csv = [
      'farm_code;village;adopted;farm_size_ha;household_size;visit_date',
      `SEMI-1;${villageCode};yes;2,75;6;2026-03-14`,
      `SEMI-1;${villageCode};no;1,5;4;2026-03-15`,
      `SEMI-2;${villageCode};no;0,5;3;2026-03-16`
    ].join('\n')
    await page.getByLabel('CSV file').setInputFiles({ name: 'semicolons.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) })
    await expect.poll(() => page.getByTestId('import-file-summary').textContent()).toContain('separated by semicolons')
    expect(await page.getByLabel('Visit date').inputValue()).toBe('visit_date')
    await page.getByRole('button', { name: 'Check the rows' }).click()
    await expect.poll(() => page.getByTestId('import-counts').textContent()).toContain('3 rows: 3 pass the checks, 0 do not')
    const preview = await page.getByTestId('import-preview').textContent()
    expect(preview).toContain('2.75')
    expect(preview).toContain('2026-03-14')
    await page.getByRole('button', { name: 'Import', exact: true }).click()
    await expect.poll(() => page.getByTestId('import-outcome').textContent()).toContain('2 of them use a farm code seen twice')
    await page.screenshot({ path: `${SCREENSHOTS}/csv-import-semicolons.png`, fullPage: true })
    const twice = await Visit.findAll({ where: { roundId: round.roundId, farmCode: 'SEMI-1' } })
    expect(twice.map(v => v.reviewState)).toEqual(['received', 'received'])
    expect(problemsLogged).toEqual([])
    await context.close()
  })
})
