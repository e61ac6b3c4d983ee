import path from 'node:path'
import type { Browser } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext, waitForApp } from '../support/browser'
import { DEMO, baseUrl, demoUser } from '../support/server'

let browser: Browser

beforeAll(async () => {
  baseUrl()
  browser = await launchBrowser()
})
afterAll(closeBrowser)

const EXPECTED_NAV: Record<string, string[]> = {
  admin: ['Home', 'People', 'Audit log', 'Settings', 'Outbox'],
  coordinator: ['Home', 'Rounds', 'Review', 'Models', 'Adoption map', 'Farmers\' data'],
  enumerator: ['Home', 'Field work'],
  funder: ['Home', 'Adoption map']
}

describe('signing in through the browser', () => {
  it.each(DEMO.users.map(u => [u.role, u.email]))('the %s sees the navigation of that role', async (role, email) => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/')
    await page.waitForURL(/\/signin/)
    await page.getByLabel('E-mail').fill(email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(url => url.pathname === '/').catch(async (error) => {
      // Keep what the page showed: a sign-in that does not land is easier to read from a picture.
      await page.screenshot({ path: path.join(SCREENSHOTS, `signin-stuck-${role}.png`) })
      throw error
    })
    await expect.poll(() => page.getByTestId('current-role').textContent()).toContain(role === 'admin' ? 'Administrator' : role[0]!.toUpperCase() + role.slice(1))
    const nav = await page.getByRole('navigation', { name: 'Main' }).getByRole('link').allTextContents()
    expect(nav.map(t => t.trim())).toEqual(EXPECTED_NAV[role])
    await page.screenshot({ path: path.join(SCREENSHOTS, `home-${role}.png`), fullPage: true })
    await context.close()
  })

  it('shows a clear message for a wrong password and for a malformed e-mail', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/signin')
    await page.getByLabel('E-mail').fill('not-an-email')
    await page.getByLabel('Password').fill('whatever')
    await page.getByRole('button', { name: 'Sign in' }).click()
    await expect.poll(() => page.locator('#email-error').textContent()).toBe('Enter a valid e-mail address')
    await page.getByLabel('E-mail').fill(demoUser('coordinator').email)
    await page.getByLabel('Password').fill('wrong password')
    await page.getByRole('button', { name: 'Sign in' }).click()
    await expect.poll(() => page.getByRole('alert').textContent()).toContain('That e-mail and password do not match an account.')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'signin-error.png') })
    await context.close()
  })

  it('keeps an enumerator out of the admin pages and lets the admin sign out', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/signin')
    await page.getByLabel('E-mail').fill(demoUser('enumerator').email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(url => url.pathname === '/')
    await page.goto('/people')
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Not open to your role')
    await page.goto('/')
    await page.getByRole('button', { name: 'Sign out' }).click()
    await page.waitForURL(/\/signin/)
    await page.goto('/')
    await page.waitForURL(/\/signin/)
    await context.close()
  })

  it('lets the admin browse people and the audit log', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/signin?next=/people')
    await waitForApp(page)
    await page.getByLabel('E-mail').fill(demoUser('admin').email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    // The sign-in page's own address holds "/people" (in ?next=): wait for the people page itself.
    await page.waitForURL(url => url.pathname === '/people')
    await expect.poll(() => page.getByTestId('person-row').count()).toBeGreaterThanOrEqual(DEMO.users.length)
    // Other tests invite people at @team-test.example; the demo staff share the organisation's domain, the demo
    // funder has the funder organisation's.
    await page.getByLabel('Search name or e-mail').fill('kestrel-valley.example')
    await expect.poll(() => page.getByTestId('person-row').count()).toBe(DEMO.users.filter(u => u.email.endsWith('@kestrel-valley.example')).length)
    await page.getByLabel('Search name or e-mail').fill(demoUser('funder').email.split('@')[1]!)
    await page.getByLabel('Role', { exact: true }).selectOption('funder')
    await expect.poll(() => page.getByTestId('person-row').count()).toBe(1)
    await page.goto('/audit?action=signin')
    await expect.poll(() => page.getByTestId('audit-row').count()).toBeGreaterThan(0)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'audit.png'), fullPage: true })
    await context.close()
  })
})
