import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { Round } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { watchConsole } from '../support/console'
import { poll, signInPage, useBrowser } from '../support/pages'
import { DEMO, demoUser } from '../support/server'

// Pages rendered on the server must be taken over by the browser without a hydration mismatch: Vue logs one as a
// console error and throws away the server's HTML. The browser sits in another time zone and language than the
// server, as a tablet in the field may, so text formatted by either one's settings would show up here.
const opened = useBrowser()

async function serverHtml(page: import('playwright-core').Page, url: string) {
  const response = await page.request.get(url)
  expect(response.status()).toBe(200)
  return response.text()
}

describe('server-rendered pages hydrate cleanly', () => {
  it('renders the settings form on the server, filled in, and takes it over with no warning', async () => {
    const context = await newTabletContext(opened.browser, { timezoneId: 'Pacific/Chatham', locale: 'de-DE' })
    const page = await context.newPage()
    const problems = watchConsole(page)
    await signInPage(page, demoUser('admin').email, '/settings')
    // The server's HTML already holds the form with the organisation's values (no "loading" placeholder).
    const html = await serverHtml(page, '/settings')
    expect(html).toContain('id="settings-name"')
    expect(html).toContain(`value="${DEMO.organisation.name}"`)
    // A fresh load, server-rendered, then hydrated.
    await page.reload()
    await poll(() => page.getByLabel('Organisation name').isEnabled()).toBe(true)
    expect(await page.getByLabel('Organisation name').inputValue()).toBe(DEMO.organisation.name)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'settings-hydrated.png'), fullPage: true })
    expect(problems).toEqual([])
    await context.close()
  }, 60_000)

  it('renders the review list on the server, with its dates, and takes it over with no warning', async () => {
    const context = await newTabletContext(opened.browser, { timezoneId: 'Pacific/Chatham', locale: 'de-DE' })
    const page = await context.newPage()
    const problems = watchConsole(page)
    // The review page chooses an open round when the address names none: the newest, which may have no visits yet.
    await signInPage(page, demoUser('coordinator').email, '/review')
    const chosen = await page.getByLabel('Round').inputValue()
    const visits = (await page.request.get(`/api/review/visits?roundId=${chosen}`).then(r => r.json())).total as number
    const html = await serverHtml(page, '/review')
    expect(html).toContain(`<option value="${chosen}" selected`)
    expect(html).toContain(visits ? 'data-testid="review-row"' : 'No visit matches these filters.')
    // The demo round, with its 1,500 visits and their dates.
    const demo = await Round.findOne({ order: [['id', 'ASC']] })
    await page.goto(`/review?roundId=${demo!.id}`)
    await poll(() => page.getByTestId('review-row').count()).toBeGreaterThan(0)
    const demoHtml = await serverHtml(page, `/review?roundId=${demo!.id}`)
    expect(demoHtml).toContain('data-testid="review-row"')
    expect(demoHtml).toMatch(/\d{1,2} [A-Z][a-z]{2} \d{4}, \d{2}:\d{2} UTC/)
    await page.reload()
    await poll(() => page.getByTestId('review-row').count()).toBeGreaterThan(0)
    await page.getByTestId('review-row').first().click()
    await poll(() => page.getByTestId('review-panel').isVisible()).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'review-hydrated.png'), fullPage: false })
    await page.goto('/')
    await page.goto(`/review?roundId=${demo!.id}&state=accepted`)
    await poll(() => page.getByTestId('review-row').count()).toBeGreaterThan(0)
    expect(problems).toEqual([])
    await context.close()
  }, 60_000)
})
