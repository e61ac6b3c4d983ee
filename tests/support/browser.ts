import { mkdirSync } from 'node:fs'
import path from 'node:path'
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core'

// Debian's Chromium, driven by playwright-core: no browser is downloaded. Playwright gives every
// launch a fresh temporary profile of its own, so no --user-data-dir is passed.
let browser: Browser | undefined

export async function launchBrowser(): Promise<Browser> {
  browser = await chromium.launch({
    executablePath: '/usr/bin/chromium',
    headless: true,
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--disable-quic',
      '--no-first-run'
    ]
  })
  return browser
}

export async function closeBrowser() {
  await browser?.close()
}

/**
 * A fresh context posing as its own client address, so sign-in limits of one test never touch another.
 * The service worker is blocked unless a test asks for it: its precaching would only slow the other tests down.
 */
export async function newTabletContext(b: Browser, { serviceWorkers = 'block' }: { serviceWorkers?: 'allow' | 'block' } = {}): Promise<BrowserContext> {
  const octet = () => 1 + Math.floor(Math.random() * 250)
  return b.newContext({
    baseURL: process.env.FURROWCAST_TEST_URL,
    serviceWorkers,
    viewport: { width: 1180, height: 820 },
    extraHTTPHeaders: { 'x-forwarded-for': `172.${octet()}.${octet()}.${octet()}` }
  })
}

export const SCREENSHOTS = path.resolve(__dirname, '../../test-results')
mkdirSync(SCREENSHOTS, { recursive: true })

/** Resolves once Vue has mounted (hydrated) the page: typing into server-rendered inputs before that is lost. */
export async function waitForApp(page: Page) {
  await page.waitForFunction(() => Boolean((document.querySelector('#__nuxt') as (Element & { __vue_app__?: unknown }) | null)?.__vue_app__))
}
