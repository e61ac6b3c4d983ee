import path from 'node:path'
import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { navFor, type Role } from '../../shared/utils/roles'
import { Round } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext, waitForApp } from '../support/browser'
import { watchConsole } from '../support/console'
import { signInPage, useBrowser } from '../support/pages'
import { ensurePublished } from '../support/models'
import { demoUser, freshClient } from '../support/server'

// No internal strings on screen: every page of every role, as its user sees it, is read as text and must hold no
// bare "Server Error", no path-like field names ("questions.12.label:"), no "reason:" prefixes, no leaked
// programming values and no UUID (wherever one could show, a name or a farm code exists and is shown instead).
const opened = useBrowser()

const INTERNAL: Array<[string, RegExp]> = [
  ['a bare server error', /Server Error/],
  ['a path-like field name', /\b[a-z]+\.\d+\.[a-zA-Z]+\b/],
  ['a "reason:" prefix', /(^|\n)\s*reason:/i],
  ['an unset value', /\b(undefined|null|NaN)\b|\[object Object\]/],
  ['a UUID', /\b[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}\b/i],
  ['a raw answer key', /\b[a-z]+(_[a-z0-9]+){2,}\b/]
]

async function pagesOf(role: Role): Promise<string[]> {
  const pages = [...navFor(role), ...navFor(role, 'user-menu')].map(item => item.to)
  if (role === 'coordinator') {
    const round = await Round.findOne({ order: [['id', 'ASC']] })
    for (const part of ['progress', 'questionnaire', 'villages', 'enumerators']) pages.push(`/rounds/${round!.id}?part=${part}`)
    // A published fit of the demo round (fitted here when the file runs alone): its results, report and the map.
    const api = freshClient()
    await api.signIn(demoUser('coordinator').email)
    const runId = await ensurePublished(api, round!.id)
    pages.push(`/models/${runId}`, `/models/${runId}/report`)
  }
  return pages
}

async function problemsOn(page: Page, url: string): Promise<string[]> {
  await page.goto(url)
  await waitForApp(page)
  await page.waitForLoadState('networkidle').catch(() => {})
  // Closed sections hold text too: open them before reading.
  await page.evaluate(() => document.querySelectorAll('details').forEach(d => (d.open = true)))
  const text = await page.evaluate(() => document.body.innerText)
  // A page that did not draw (an error page, an empty shell) would pass every pattern below: it must hold a heading.
  expect(await page.locator('h1').count(), `${url} shows a heading`).toBeGreaterThan(0)
  expect(text.length, `${url} shows text`).toBeGreaterThan(80)
  return INTERNAL.flatMap(([what, pattern]) => {
    const found = pattern.exec(text)
    return found ? [`${url}: ${what} — "${text.slice(Math.max(0, found.index - 40), found.index + found[0].length + 40).replace(/\s+/g, ' ')}"`] : []
  })
}

describe('no internal strings on screen', () => {
  it('the patterns catch what they are for', () => {
    const samples = ['Server Error', 'questions.12.label: Required', 'reason: too short', 'Farms: undefined',
      'Visit 0f386aa0-4923-481a-88c0-04278f180615', 'farm_size_ha is missing']
    expect(samples.map(text => INTERNAL.filter(([, pattern]) => pattern.test(text)).length)).toEqual([1, 1, 1, 1, 1, 1])
    expect(INTERNAL.some(([, pattern]) => pattern.test('Farm size (ha): 2.5; 14 farms adopted, 61 % of 23'))).toBe(false)
  })

  it.each(['admin', 'coordinator', 'funder', 'enumerator'] as const)('every page of the %s reads as words', async (role) => {
    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    const consoleProblems = watchConsole(page)
    await signInPage(page, demoUser(role).email, '/')
    const found: string[] = []
    for (const url of await pagesOf(role)) found.push(...await problemsOn(page, url))
    await page.screenshot({ path: path.join(SCREENSHOTS, `screen-words-${role}.png`), fullPage: true })
    expect(found).toEqual([])
    expect(consoleProblems).toEqual([])
    await context.close()
  }, 180_000)
})
