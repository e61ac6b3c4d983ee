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

/** A Content-Security-Policy violation a page reported: the directive and what it blocked. */
export interface CspViolation {
  page: string
  directive: string
  blocked: string
  sample: string
}

const violations: CspViolation[] = []

/** Every violation reported since the browser was launched (see newTabletContext). */
export function cspViolations(): readonly CspViolation[] {
  return violations
}

/**
 * Closes the browser, and fails the test file (its afterAll) if any page reported a CSP violation: every
 * browser test doubles as a check that the policy and the app agree.
 */
export async function closeBrowser() {
  await browser?.close()
  if (violations.length) {
    const found = violations.splice(0)
    throw new Error(`Content-Security-Policy violations:\n${found.map(v => `  ${v.page}: ${v.directive} blocked ${v.blocked} ${v.sample}`).join('\n')}`)
  }
}

/**
 * A fresh context posing as its own client address, so sign-in limits of one test never touch another.
 * The service worker is blocked unless a test asks for it: its precaching would only slow the other tests down.
 */
export async function newTabletContext(b: Browser, { serviceWorkers = 'block', timezoneId, locale }: { serviceWorkers?: 'allow' | 'block', timezoneId?: string, locale?: string } = {}): Promise<BrowserContext> {
  const octet = () => 1 + Math.floor(Math.random() * 250)
  const context = await b.newContext({
    baseURL: process.env.FURROWCAST_TEST_URL,
    serviceWorkers,
    // A browser far from the server's time zone and language: a page that formats dates by either would differ.
    timezoneId,
    locale,
    viewport: { width: 1180, height: 820 },
    extraHTTPHeaders: { 'x-forwarded-for': `172.${octet()}.${octet()}.${octet()}` }
  })
  await watchCsp(context)
  return context
}

/** Collects every securitypolicyviolation event of every page of the context into cspViolations(). */
export async function watchCsp(context: BrowserContext) {
  await context.exposeBinding('__furrowcastCspViolation', ({ page }, v: Omit<CspViolation, 'page'>) => {
    violations.push({ page: page.url(), ...v })
  })
  await context.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (e) => {
      const report = (window as unknown as { __furrowcastCspViolation: (v: object) => void }).__furrowcastCspViolation
      report({ directive: e.effectiveDirective, blocked: e.blockedURI, sample: e.sample })
    })
  })
}

export const SCREENSHOTS = path.resolve(__dirname, '../../test-results')
mkdirSync(SCREENSHOTS, { recursive: true })

/** Resolves once Vue has mounted (hydrated) the page: typing into server-rendered inputs before that is lost. */
export async function waitForApp(page: Page) {
  await page.waitForFunction(() => Boolean((document.querySelector('#__nuxt') as (Element & { __vue_app__?: unknown }) | null)?.__vue_app__))
}
