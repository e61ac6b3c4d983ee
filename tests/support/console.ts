import type { Page } from 'playwright-core'

/**
 * Collects what a page logs as errors (console errors, uncaught exceptions, Vue hydration warnings), so a test can
 * assert that none happened on the pages it visited.
 */
export function watchConsole(page: Page): string[] {
  const problems: string[] = []
  page.on('console', (message) => {
    const text = message.text()
    if (message.type() === 'error' || (message.type() === 'warning' && /hydration/i.test(text))) problems.push(`${message.type()}: ${text}`)
  })
  page.on('pageerror', error => problems.push(`exception: ${error.message}`))
  return problems
}
