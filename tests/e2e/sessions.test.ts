import path from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SessionRecord } from '../../server/db/models'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext, waitForApp } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type Client, DEMO, demoUser, freshClient } from '../support/server'
import { newPerson } from '../support/team'

let browser: Browser
let admin: Client

beforeAll(async () => {
  testDatabase()
  browser = await launchBrowser()
  admin = freshClient()
  await admin.signIn(demoUser('admin').email)
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

async function signIn(page: Page, email: string, password: string, next: string) {
  await page.goto(`/signin?next=${next}`)
  await waitForApp(page)
  await page.getByLabel('E-mail').fill(email)
  await page.getByLabel('Password', { exact: true }).fill(password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === next)
}

describe('the account page', () => {
  it('lists where the person is signed in, ends another device, then signs out everywhere', async () => {
    const person = await newPerson(admin, 'coordinator')
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await signIn(page, person.email, person.password, '/account')
    // Two sessions: the API client of newPerson and this browser.
    const rows = page.getByTestId('session-row')
    await expect.poll(() => rows.count()).toBe(2)
    const here = rows.filter({ hasText: 'this device' })
    await expect.poll(() => here.textContent()).toContain('Headless Chrome on Linux')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'account-sessions.png'), fullPage: true })

    await rows.filter({ hasText: 'Script or tool' }).getByRole('button', { name: 'End this session' }).click()
    await expect.poll(() => page.getByRole('status').first().textContent()).toContain('Script or tool is signed out.')
    await expect.poll(() => rows.count()).toBe(1)
    expect((await person.client.get('/api/me')).status).toBe(401)

    await page.getByTestId('sign-out-everywhere').click()
    await page.waitForURL(/\/signin/)
    expect((await context.request.get('/api/me')).status()).toBe(401)
    expect(await SessionRecord.count({ where: { userId: person.userId, revokedAt: null } })).toBe(0)
    await context.close()
  })
})

describe('the people page', () => {
  it('shows on how many devices a person is signed in, and signs them out everywhere', async () => {
    const person = await newPerson(admin, 'enumerator')
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await signIn(page, demoUser('admin').email, DEMO.password, '/people')
    await page.getByLabel('Search name or e-mail').fill(person.email)
    const row = page.locator(`[data-testid="person-row"][data-email="${person.email}"]`)
    await expect.poll(() => row.textContent()).toContain('1 device')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'people-sessions.png'), fullPage: true })
    await row.getByRole('button', { name: /Sign out everywhere/ }).click()
    await expect.poll(() => page.getByTestId('people-notice').textContent()).toContain('is signed out everywhere (1 session ended)')
    await expect.poll(() => row.textContent()).toContain('No device')
    expect((await person.client.get('/api/field/setup')).status).toBe(401)
    await context.close()
  })
})
