import path from 'node:path'
import type { Browser } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { runningMariadbPid } from '../../scripts/lib/mariadb.mjs'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext, waitForApp } from '../support/browser'
import { DEMO, baseUrl, demoUser } from '../support/server'
import { openFieldStore } from '../support/field-pin'

// What the enumerator sees when the server cannot reach its database: the real test database is frozen (SIGSTOP),
// so the tablet's sync gets the server's real 503 with Retry-After.
let browser: Browser
const pid = runningMariadbPid()
const poll = <T>(check: () => T | Promise<T>, timeout = 15_000) => expect.poll(check, { timeout })

beforeAll(async () => {
  baseUrl()
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
})

describe.skipIf(pid === null)('the tablet when the server is busy', () => {
  it('says "Server busy, will retry" instead of an error, and syncs once the database is back', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/signin?next=/field')
    await waitForApp(page)
    await page.getByLabel('E-mail').fill(demoUser('enumerator').email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await openFieldStore(page)
    const button = page.getByRole('button', { name: 'Sync now' })
    await poll(() => button.isEnabled(), 30_000).toBe(true)
    await poll(() => page.getByTestId('sync-last').textContent(), 30_000).not.toContain('never')
    const lastBefore = await page.getByTestId('sync-last').textContent()

    process.kill(pid!, 'SIGSTOP')
    try {
      await button.click()
      const busy = page.getByTestId('sync-busy')
      await poll(() => busy.isVisible()).toBe(true)
      expect(await busy.textContent()).toContain('Server busy, will retry.')
      // Not shown as a failure: no error line, and the visits are said to be safe.
      expect(await page.locator('.field-error').count()).toBe(0)
      await page.screenshot({ path: path.join(SCREENSHOTS, 'field-server-busy.png'), fullPage: true })
    }
    finally {
      process.kill(pid!, 'SIGCONT')
    }
    await poll(() => button.isEnabled(), 30_000).toBe(true)
    await button.click()
    await poll(() => page.getByTestId('sync-busy').count(), 30_000).toBe(0)
    await poll(() => page.getByTestId('sync-last').textContent(), 30_000).not.toBe(lastBefore)
    await context.close()
  })
})
