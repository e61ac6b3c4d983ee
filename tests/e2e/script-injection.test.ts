import path from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Organisation, User } from '../../server/db/models'
import type { ModelRunDetail, ModelRunSummary } from '../../shared/types/models'
import type { MapVillage } from '../../shared/types/overview'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext, waitForApp } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { makeVisit } from '../support/field'
import { uniqueEmail } from '../support/outbox'
import { type Client, DEMO, demoUser, freshClient } from '../support/server'

// Stored script injection: markup in every text field the product keeps, then every page as each role in Chromium,
// hovering the map's villages. No dialog may open, nothing may set window.__xss, no payload may become an element,
// and the payload must be readable as text where the field is shown.

const IMG = '<img src=x onerror="window.__xss=1;alert(1)">'
const SCRIPT = '"><script>window.__xss=1;alert(1)</script>'
const tag = Math.random().toString(36).slice(2, 7)
const named = (what: string, payload = IMG) => `${what} ${payload}`

let browser: Browser
const clients: Record<string, Client> = {}
const emails: Record<string, string> = {}
let roundId = 0
let runId = 0
let visitId = ''
let villages: MapVillage[] = []

async function ok<T>(answer: Promise<{ status: number, body: T }>, status = 200): Promise<T> {
  const a = await answer
  if (a.status !== status) throw new Error(`${a.status} ${JSON.stringify(a.body).slice(0, 300)}`)
  return a.body
}

beforeAll(async () => {
  testDatabase()
  // An invented programme whose organisation, people and funder are all named with markup.
  const funderDomain = `kudu-${tag}.example`
  const organisation = await Organisation.create({
    name: named('Kudu Ridge Growers'),
    slug: `kudu-ridge-${tag}`,
    settings: { defaultClusterVariable: 'village', minVisitsForFunders: 5, funderOrganisations: [{ name: named('Sable Fund', SCRIPT), emailDomain: funderDomain }] }
  })
  const { passwordHash } = (await User.findOne({ where: { email: demoUser('admin').email } }))!
  for (const role of ['admin', 'coordinator', 'enumerator', 'funder']) {
    emails[role] = role === 'funder' ? `reader-${tag}@${funderDomain}` : uniqueEmail(`kudu-${role}`)
    await User.create({ organisationId: organisation.id, email: emails[role]!, name: named(`Kudu ${role}`, role === 'admin' ? SCRIPT : IMG), role: role as 'admin', passwordHash, lastSignInAt: null })
    clients[role] = freshClient()
    await clients[role].signIn(emails[role]!, DEMO.password)
  }
  const coordinator = clients.coordinator!
  await ok(clients.admin!.post('/api/people/invitations', { email: uniqueEmail('kudu-invited'), role: 'coordinator', name: named('Invited') }), 201)

  const ids: number[] = []
  const codes: string[] = []
  for (let i = 0; i < 4; i++) {
    const code = `KR${tag}${i}`.toUpperCase()
    codes.push(code)
    ids.push((await ok(coordinator.post<{ id: number }>('/api/villages', { code, name: named(`Kudu ${i}`, i % 2 ? SCRIPT : IMG), district: named('District'), centreLat: -19 - i * 0.15, centreLon: 29 + i * 0.1 }))).id)
  }
  roundId = (await ok(coordinator.post<{ id: number }>('/api/rounds', { name: named('Round'), technology: named('Bags', SCRIPT), season: 'Long rains' }))).id
  await ok(coordinator.request('PUT', `/api/rounds/${roundId}/questionnaire`, { questions: [
    { key: 'farm_size_ha', label: named('Farm size'), help: named('Help', SCRIPT), type: 'number', unit: 'ha', min: 0, max: 50, required: true },
    { key: 'soil', label: named('Soil'), type: 'choice', options: [{ value: 'sandy', label: named('Sandy') }, { value: 'clay', label: named('Clay', SCRIPT) }] },
    { key: 'remark', label: named('Remark'), type: 'text', maxLength: 200 }
  ] }))
  await ok(coordinator.request('PUT', `/api/rounds/${roundId}/villages`, { villageIds: ids }))
  const enumerator = await User.findOne({ where: { email: emails.enumerator } })
  await ok(coordinator.request('PUT', `/api/rounds/${roundId}/assignments`, { assignments: [{ userId: enumerator!.id, villageId: ids[0]! }] }))
  await ok(coordinator.request('PATCH', `/api/rounds/${roundId}`, { status: 'open' }))

  // Past visits through the import (file name and text cells with markup), then two synced visits to review.
  const lines = ['farm,village,adopted,farm_size_ha,soil,remark']
  for (let i = 0; i < 80; i++) {
    const size = 0.5 + ((i * 37) % 40) / 10
    lines.push(`KR-${i},${codes[i % 4]},${(size > 2.2) !== (i % 7 === 0) ? 'yes' : 'no'},${size},${i % 2 ? 'clay' : 'sandy'},"${named('Remark', i % 2 ? SCRIPT : IMG).replace(/"/g, '""')}"`)
  }
  await ok(coordinator.post(`/api/rounds/${roundId}/imports`, { csv: `${lines.join('\n')}\n`, fileName: named('past.csv'), mode: 'all-or-nothing', mapping: { farmCode: 'farm', villageCode: 'village', questions: { adopted: 'adopted', farm_size_ha: 'farm_size_ha', soil: 'soil', remark: 'remark' } } }))
  const detail = await ok(coordinator.get<{ questionnaire: { id: number } }>(`/api/rounds/${roundId}`))
  const round = { roundId, versionId: detail.questionnaire.id, assignedVillageId: ids[0]!, otherVillageId: ids[1]!, centre: { lat: -19, lon: 29 } }
  const answers = (remark: string) => ({ answers: { adopted: true, farm_size_ha: 2.5, soil: 'clay', remark } })
  const sent = [
    makeVisit(round, { location: { kind: 'manual', reason: named('No signal') }, ...answers(named('Answer')) }),
    makeVisit(round, answers(named('Answer', SCRIPT)))
  ]
  await ok(clients.enumerator!.post('/api/sync/visits', { visits: sent }))
  visitId = sent[0]!.id
  await ok(coordinator.post(`/api/review/visits/${sent[0]!.id}`, { action: 'send_back', reason: named('Reason') }))
  await ok(coordinator.post(`/api/review/visits/${sent[1]!.id}`, { action: 'correct', reason: named('Reason', SCRIPT), answers: { remark: named('Corrected') } }))

  const started = await ok(coordinator.post<ModelRunSummary>('/api/models', { roundId, covariates: [{ key: 'farm_size_ha' }, { key: 'soil' }] }), 202)
  runId = started.id
  for (let i = 0; i < 160; i++) {
    const run = await ok(coordinator.get<ModelRunDetail>(`/api/models/${runId}`))
    if (run.status === 'done') break
    if (run.status === 'failed') throw new Error(JSON.stringify(run.error))
    await new Promise(resolve => setTimeout(resolve, 250))
  }
  await ok(coordinator.post(`/api/models/${runId}/scenarios`, { scenarios: [{ name: named('Scenario'), covariate: 'farm_size_ha', shift: 1 }] }))
  await ok(coordinator.post(`/api/models/${runId}/publish`, { note: named('Note', SCRIPT), tabletAid: true }))
  villages = (await ok(clients.funder!.get<{ villages: MapVillage[] }>(`/api/overview/${roundId}`))).villages
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

interface Visit { role: string, path: () => string, shows?: string }
const PAGES: Visit[] = [
  { role: 'admin', path: () => '/', shows: 'Kudu admin' },
  { role: 'admin', path: () => '/people', shows: 'Invited <img' },
  { role: 'admin', path: () => '/settings', shows: 'Sable Fund' },
  { role: 'admin', path: () => '/audit' },
  { role: 'admin', path: () => '/account' },
  { role: 'admin', path: () => '/outbox' },
  { role: 'coordinator', path: () => '/', shows: 'Kudu coordinator' },
  { role: 'coordinator', path: () => '/rounds', shows: 'Round <img' },
  { role: 'coordinator', path: () => `/rounds/${roundId}`, shows: 'Round <img' },
  { role: 'coordinator', path: () => `/rounds/${roundId}?part=questionnaire`, shows: 'Farm size <img' },
  { role: 'coordinator', path: () => `/rounds/${roundId}?part=villages` },
  { role: 'coordinator', path: () => `/rounds/${roundId}/import` },
  { role: 'coordinator', path: () => `/review?roundId=${roundId}`, shows: 'Kudu 0 <img' },
  { role: 'coordinator', path: () => `/review?roundId=${roundId}&visit=${visitId}` },
  { role: 'coordinator', path: () => `/models?round=${roundId}` },
  { role: 'coordinator', path: () => `/models/${runId}`, shows: 'Scenario <img' },
  { role: 'coordinator', path: () => `/models/${runId}/report` },
  { role: 'coordinator', path: () => `/overview?round=${roundId}`, shows: 'Note "><script>' },
  { role: 'enumerator', path: () => '/field' },
  { role: 'enumerator', path: () => '/account' },
  { role: 'funder', path: () => `/overview?round=${roundId}`, shows: 'Round <img' },
  { role: 'funder', path: () => '/account' }
]

// Leaflet's map object, caught as the app builds it, so the test knows where each village is drawn.
const CATCH_MAP = `(() => {
  let value
  Object.defineProperty(window, 'L', { configurable: true, get: () => value, set: (v) => {
    value = v
    window.__maps = []
    v.Map.addInitHook(function () { window.__maps.push(this) })
  } })
})()`

async function signIn(page: Page, role: string) {
  await page.goto('/signin')
  await waitForApp(page)
  await page.getByLabel('E-mail').fill(emails[role]!)
  await page.getByLabel('Password').fill(DEMO.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => !url.pathname.startsWith('/signin'))
}

async function expectNoScript(page: Page, dialogs: string[], where: string) {
  expect(dialogs, where).toEqual([])
  expect(await page.evaluate(() => (window as unknown as { __xss?: unknown }).__xss), where).toBeUndefined()
  // No payload became an element: no image with src "x", no script holding the payload.
  expect(await page.evaluate(() => document.querySelectorAll('img[src="x"]').length), where).toBe(0)
  // (The page's JSON data island holds the names as escaped data; only scripts a browser would run count.)
  const runnable = (type: string) => ['', 'module', 'text/javascript', 'application/javascript'].includes(type.toLowerCase())
  expect(await page.evaluate(() => [...document.scripts].filter(s => s.textContent?.includes('__xss')).map(s => s.type)), where)
    .toSatisfy((types: string[]) => !types.some(runnable))
}

describe('markup stored in every text field runs nowhere', () => {
  for (const role of ['admin', 'coordinator', 'enumerator', 'funder']) {
    it(`every page as ${role}`, async () => {
      const context = await newTabletContext(browser)
      await context.addInitScript(CATCH_MAP)
      const page = await context.newPage()
      const dialogs: string[] = []
      page.on('dialog', (dialog) => {
        dialogs.push(dialog.message())
        void dialog.dismiss()
      })
      await signIn(page, role)
      for (const visit of PAGES.filter(p => p.role === role)) {
        const where = `${role} ${visit.path()}`
        await page.goto(visit.path())
        await waitForApp(page)
        await page.waitForLoadState('networkidle')
        // Shown as text: in the page's visible text, or as the value of a field that edits it.
        if (visit.shows) await expect.poll(() => page.evaluate(() => document.body.innerText + [...document.querySelectorAll<HTMLInputElement>('input, textarea')].map(e => e.value).join('\n')), { timeout: 15_000, message: where }).toContain(visit.shows)
        if (visit.path().startsWith('/overview')) {
          // The villages as a table: opened, every village's name is there as text.
          await page.getByText('The villages as a table').click()
          for (const v of villages) await expect.poll(() => page.getByTestId('map-village-list').innerText(), { message: where }).toContain(v.name)
        }
        const shot = `script-injection-${role}-${visit.path().replace(/[^a-z0-9]+/gi, '-').replace(/^-|-$/g, '') || 'home'}`
        await page.screenshot({ path: path.join(SCREENSHOTS, `${shot}.png`), fullPage: true })
        if (visit.path().startsWith('/overview')) await hoverVillages(page, where, shot)
        await expectNoScript(page, dialogs, where)
      }
      await context.close()
    })
  }
})

/** Moves the real mouse onto every village of the map and reads its tooltip as text. */
async function hoverVillages(page: Page, where: string, shot: string) {
  await page.waitForFunction(() => Number(document.querySelector('[data-testid="adoption-map"]')?.getAttribute('data-villages-drawn')) > 0)
  await page.locator('[data-testid="adoption-map"]').scrollIntoViewIfNeeded()
  const box = (await page.locator('[data-testid="adoption-map"]').boundingBox())!
  for (const v of villages) {
    const point = await page.evaluate(([lat, lon]) => {
      type LeafletMap = { getContainer: () => HTMLElement, latLngToContainerPoint: (p: [number, number]) => { x: number, y: number } }
      const outer = document.querySelector('[data-testid="adoption-map"]')!
      const map = (window as unknown as { __maps: LeafletMap[] }).__maps.filter(m => outer.contains(m.getContainer())).at(-1)!
      return map.latLngToContainerPoint([lat!, lon!])
    }, [v.lat, v.lon])
    // Leaflet throttles the canvas's mouse moves: approach in a few steps, and once more if no tooltip opened.
    const tooltip = page.locator('.leaflet-tooltip', { hasText: v.name })
    for (let attempt = 0; attempt < 3 && !(await tooltip.count()); attempt++) {
      await page.mouse.move(box.x + point.x + 12, box.y + point.y + 12, { steps: 3 })
      await page.mouse.move(box.x + point.x, box.y + point.y, { steps: 4 })
      await tooltip.first().waitFor({ timeout: 2_000 }).catch(() => {})
    }
    expect(await tooltip.count(), `${where}: tooltip of ${v.code} at ${point.x},${point.y}`).toBe(1)
    await page.screenshot({ path: path.join(SCREENSHOTS, `${shot}-tooltip-${v.code}.png`) })
    // The name is a text node inside the tooltip, not markup.
    expect(await tooltip.locator('img, script').count(), where).toBe(0)
    expect(await tooltip.locator('strong').textContent(), where).toBe(v.name)
  }
  expect(villages.length).toBe(4)
}
