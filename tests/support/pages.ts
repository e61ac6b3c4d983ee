import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, expect } from 'vitest'
import { closeBrowser, launchBrowser, waitForApp } from './browser'
import { closeTestDatabase, testDatabase } from './database'
import { DEMO, baseUrl } from './server'

// The set-up every browser test file repeats: one browser and the test database for the file, a poll with a
// readable timeout, and signing in through the real sign-in page.

/** Launches the browser and opens the database before the file's tests, and closes both after them. */
export function useBrowser(): { readonly browser: Browser } {
  const holder = {} as { browser: Browser }
  beforeAll(async () => {
    baseUrl()
    testDatabase()
    holder.browser = await launchBrowser()
  })
  afterAll(async () => {
    await closeBrowser()
    await closeTestDatabase()
  })
  return holder
}

/** Waits until the check's value passes the matcher that follows (10 s unless told). */
export const poll = <T>(check: () => T | Promise<T>, timeout = 10_000) => expect.poll(check, { timeout })

/** Signs in on the sign-in page and waits until `next` is shown and live. */
export async function signInPage(page: Page, email: string, next: string, password = DEMO.password) {
  await page.goto(`/signin?next=${encodeURIComponent(next)}`)
  await waitForApp(page)
  await page.getByLabel('E-mail').fill(email)
  await page.getByLabel('Password', { exact: true }).fill(password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(url => url.pathname === next.split('?')[0])
  await waitForApp(page)
}
