import type { Page } from 'playwright-core'

/** The PIN the tests choose for the demo enumerators' tablets. */
export const TEST_PIN = '482913'

/**
 * Opens the tablet's encrypted store wherever the field app was just opened (a sign-in to /field, a goto or a
 * reload of a field page: the data key lives only in the page's memory). Chooses the PIN on the first use in this
 * browser context, types it on the lock screen afterwards, and returns once the field page itself shows.
 */
export async function openFieldStore(page: Page, pin = TEST_PIN) {
  const setup = page.getByTestId('field-pin-setup')
  const unlock = page.getByTestId('field-unlock')
  const open = page.getByTestId('field-lock')
  await setup.or(unlock).or(open).first().waitFor({ timeout: 30_000 })
  if (await setup.isVisible()) {
    await page.getByLabel('PIN', { exact: true }).fill(pin)
    await page.getByLabel('The same PIN again').fill(pin)
    await page.getByRole('button', { name: 'Set the PIN' }).click()
  }
  else if (await unlock.isVisible()) {
    await page.getByLabel('PIN', { exact: true }).fill(pin)
    await page.getByRole('button', { name: 'Unlock' }).click()
  }
  await open.waitFor({ timeout: 30_000 })
}
