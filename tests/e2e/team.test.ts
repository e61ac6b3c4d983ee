import path from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEFAULT_ORGANISATION_SETTINGS, Organisation, User, UserToken } from '../../server/db/models'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { linkToken, uniqueEmail, waitForMail } from '../support/outbox'
import { DEMO, baseUrl, demoUser, freshClient } from '../support/server'
import { inviteThroughMail } from '../support/team'

let browser: Browser

beforeAll(async () => {
  baseUrl()
  testDatabase()
  browser = await launchBrowser()
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

async function signIn(page: Page, email: string, password: string) {
  await page.getByLabel('E-mail').fill(email)
  await page.getByLabel('Password', { exact: true }).fill(password)
  await page.getByRole('button', { name: 'Sign in' }).click()
}

describe('bringing a new coordinator in through the browser', () => {
  it('the admin invites, the invitee follows the mailed link, chooses a password and signs in as coordinator', async () => {
    const email = uniqueEmail('browser-coordinator')
    const adminContext = await newTabletContext(browser)
    const admin = await adminContext.newPage()
    await admin.goto('/signin?next=/people')
    await signIn(admin, demoUser('admin').email, DEMO.password)
    await admin.waitForURL(/\/people/)
    await admin.getByLabel('Their e-mail address').fill(email)
    await admin.getByLabel('Their name (optional)').fill('Ingrid Mwangi-Halloran')
    await admin.getByLabel('Their role').selectOption('coordinator')
    await admin.getByRole('button', { name: 'Send invitation' }).click()
    await expect.poll(() => admin.getByTestId('people-notice').textContent()).toContain(`Invitation on its way to ${email}`)
    await admin.getByLabel('Search name or e-mail').fill(email)
    const row = admin.locator(`[data-testid="person-row"][data-email="${email}"]`)
    await expect.poll(() => row.textContent()).toContain('Invited')
    const mail = await waitForMail(email)
    // Once the catcher has the message, the list shows it as sent.
    await admin.reload()
    await expect.poll(() => row.getByTestId('mail-state').getAttribute('data-status')).toBe('sent')
    await admin.screenshot({ path: path.join(SCREENSHOTS, 'people-invited.png'), fullPage: true })
    const { url } = linkToken(mail, 'welcome')
    const inviteeContext = await newTabletContext(browser)
    const invitee = await inviteeContext.newPage()
    await invitee.goto(url)
    await expect.poll(() => invitee.getByText(email).count()).toBeGreaterThan(0)
    await invitee.getByLabel('New password (at least 10 characters)').fill('password1234')
    await invitee.getByLabel('The same password again').fill('password1234')
    await invitee.getByRole('button', { name: 'Save password' }).click()
    await expect.poll(() => invitee.locator('#new-password-error').textContent()).toMatch(/most common/)
    await invitee.getByLabel('New password (at least 10 characters)').fill('terraces-of-lower-ombara')
    await invitee.getByLabel('The same password again').fill('terraces-of-lower-ombara')
    await invitee.getByRole('button', { name: 'Save password' }).click()
    await invitee.waitForURL(/\/signin/)
    await expect.poll(() => invitee.getByTestId('signin-notice').textContent()).toContain('Your password is set')
    await signIn(invitee, email, 'terraces-of-lower-ombara')
    await invitee.waitForURL(u => u.pathname === '/')
    await expect.poll(() => invitee.getByTestId('current-role').textContent()).toContain('Coordinator')
    await invitee.screenshot({ path: path.join(SCREENSHOTS, 'invitee-home.png'), fullPage: true })

    // The same link a second time: a clear page, no form.
    await invitee.goto(url)
    await expect.poll(() => invitee.getByTestId('link-error').textContent()).toContain('already been used')
    await adminContext.close()
    await inviteeContext.close()
  })
})

describe('dead links show a clear page', () => {
  it.each([
    ['expired', 'has expired'],
    ['tampered', 'is not valid'],
    ['replaced', 'A newer invitation was sent']
  ])('an invitation link that is %s', async (kind, text) => {
    const admin = freshClient()
    await admin.signIn(demoUser('admin').email)
    const invited = await inviteThroughMail(admin, { role: 'enumerator' })
    let token = invited.token
    if (kind === 'expired') await UserToken.update({ expiresAt: new Date(Date.now() - 1000) }, { where: { id: Number(token.split('.')[0]) } })
    if (kind === 'tampered') token = `${token.slice(0, -2)}${token.endsWith('zz') ? 'yy' : 'zz'}`
    if (kind === 'replaced') await inviteThroughMail(admin, { email: invited.email, role: 'enumerator' })
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto(`/welcome?token=${encodeURIComponent(token)}`)
    await expect.poll(() => page.getByTestId('link-error').textContent()).toContain(text)
    expect(await page.getByLabel('New password (at least 10 characters)').count()).toBe(0)
    await page.screenshot({ path: path.join(SCREENSHOTS, `link-${kind}.png`) })
    await context.close()
  })

  it('a reset page opened without a token', async () => {
    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/reset')
    await expect.poll(() => page.getByTestId('link-error').textContent()).toContain('needs the link from your message')
    await context.close()
  })
})

describe('forgotten password through the browser', () => {
  it('answers the same for any address and the mailed link leads to a new password', async () => {
    const admin = freshClient()
    await admin.signIn(demoUser('admin').email)
    const invited = await inviteThroughMail(admin, { role: 'funder' })
    expect((await freshClient().post('/api/auth/password', { token: invited.token, purpose: 'invitation', password: 'first-rains-in-march' })).status).toBe(200)

    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/signin')
    await page.getByRole('link', { name: 'Forgot your password?' }).click()
    await page.waitForURL(/\/forgot/)
    await page.getByLabel('E-mail').fill(invited.email)
    await page.getByRole('button', { name: 'Send me a link' }).click()
    const answer = await page.getByTestId('forgot-sent').textContent()
    expect(answer).toContain('If an account uses this address')
    const { url } = linkToken(await waitForMail(invited.email, 2), 'reset')
    await page.goto(url)
    await page.getByLabel('New password (at least 10 characters)').fill('second-rains-in-october')
    await page.getByLabel('The same password again').fill('second-rains-in-october')
    await page.getByRole('button', { name: 'Save password' }).click()
    await page.waitForURL(/\/signin/)
    await signIn(page, invited.email, 'second-rains-in-october')
    await page.waitForURL(u => u.pathname === '/')
    await context.close()
  })
})

describe('organisation settings and outbox through the browser', () => {
  it('an admin of an organisation of their own edits the settings and reads the outbox', async () => {
    // Its own invented organisation, so other tests that read the demo organisation's settings are untouched.
    const suffix = Math.random().toString(36).slice(2, 8)
    const organisation = await Organisation.create({ name: 'Baobab Flats Irrigators', slug: `baobab-flats-${suffix}`, settings: DEFAULT_ORGANISATION_SETTINGS })
    const { passwordHash } = (await User.findOne({ where: { email: demoUser('admin').email } }))!
    const email = uniqueEmail('baobab-admin')
    await User.create({ organisationId: organisation.id, email, name: 'Kofi Lindahl', role: 'admin', passwordHash, lastSignInAt: null })

    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/signin?next=/settings')
    await signIn(page, email, DEMO.password)
    await page.waitForURL(/\/settings/)
    await expect.poll(() => page.getByLabel('Organisation name').inputValue()).toBe('Baobab Flats Irrigators')
    await page.getByLabel('Minimum visits in a village before funders see it').fill('12')
    await page.getByRole('button', { name: 'Add a funder organisation' }).click()
    await page.getByLabel('Funder 1: name').fill('Sandveld Harvest Foundation')
    await page.getByLabel('Funder 1: e-mail domain').fill('@sandveld.example')
    await page.getByRole('button', { name: 'Save settings' }).click()
    await expect.poll(() => page.locator('#funder-domain-0-error').textContent()).toContain('without @')
    await page.getByLabel('Funder 1: e-mail domain').fill('sandveld.example')
    await page.getByRole('button', { name: 'Save settings' }).click()
    await expect.poll(() => page.getByRole('status').textContent()).toContain('Settings saved')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'settings.png'), fullPage: true })
    await page.reload()
    await expect.poll(() => page.getByLabel('Funder 1: e-mail domain').inputValue()).toBe('sandveld.example')
    await expect.poll(() => page.getByLabel('Minimum visits in a village before funders see it').inputValue()).toBe('12')
    await organisation.reload()
    expect(organisation.settings).toMatchObject({ minVisitsForFunders: 12, funderOrganisations: [{ name: 'Sandveld Harvest Foundation', emailDomain: 'sandveld.example' }] })

    // The outbox shows only this organisation's messages: none yet, then the invitation just sent.
    await page.goto('/outbox')
    await expect.poll(() => page.getByText('No message has been sent yet.').count()).toBe(1)
    await page.goto('/people')
    const invitee = uniqueEmail('baobab-enumerator')
    await page.getByLabel('Their e-mail address').fill(invitee)
    await page.getByRole('button', { name: 'Send invitation' }).click()
    await expect.poll(() => page.getByTestId('people-notice').textContent()).toContain(invitee)
    await waitForMail(invitee)
    await page.goto('/outbox')
    const message = page.getByTestId('outbox-message')
    await expect.poll(() => message.count()).toBe(1)
    await message.getByRole('button').click()
    await expect.poll(() => message.locator('pre').textContent()).toContain('/welcome?token=')
    await page.screenshot({ path: path.join(SCREENSHOTS, 'outbox.png'), fullPage: true })
    await context.close()
  })
})
