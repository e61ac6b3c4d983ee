import { mkdtempSync, mkdirSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import path from 'node:path'
import { chromium, type Browser, type BrowserContext } from 'playwright-core'

// Debian's Chromium, driven by playwright-core: no browser is downloaded.
let browser: Browser | undefined
let profile: string | undefined

export async function launchBrowser(): Promise<Browser> {
  profile = mkdtempSync(path.join(tmpdir(), 'furrowcast-chromium-'))
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
      '--no-first-run',
      `--user-data-dir=${profile}`
    ]
  })
  return browser
}

export async function closeBrowser() {
  await browser?.close()
  if (profile) rmSync(profile, { recursive: true, force: true })
}

/** A fresh context posing as its own client address, so sign-in limits of one test never touch another. */
export async function newTabletContext(b: Browser): Promise<BrowserContext> {
  const octet = () => 1 + Math.floor(Math.random() * 250)
  return b.newContext({
    baseURL: process.env.FURROWCAST_TEST_URL,
    viewport: { width: 1180, height: 820 },
    extraHTTPHeaders: { 'x-forwarded-for': `172.${octet()}.${octet()}.${octet()}` }
  })
}

export const SCREENSHOTS = path.resolve(__dirname, '../../test-results')
mkdirSync(SCREENSHOTS, { recursive: true })
