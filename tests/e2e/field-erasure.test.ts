import path from 'node:path'
import { randomUUID } from 'node:crypto'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { User } from '../../server/db/models'
import { SCREENSHOTS, closeBrowser, launchBrowser, newTabletContext, waitForApp } from '../support/browser'
import { closeTestDatabase, testDatabase } from '../support/database'
import { makeRound, makeVisit } from '../support/field'
import { type TestOrganisation, makeOrganisation } from '../support/organisation'
import { DEMO } from '../support/server'
import { openFieldStore } from '../support/field-pin'

// The tablet's copy of an erased farm: on the next sync the visit and its waiting photo leave the tablet's own
// database, and the farm code leaves the screen. Read on the composed page and in the raw IndexedDB store.
let browser: Browser
let org: TestOrganisation
const poll = <T>(check: () => T | Promise<T>, timeout = 30_000) => expect.poll(check, { timeout })

beforeAll(async () => {
  testDatabase()
  browser = await launchBrowser()
  org = await makeOrganisation('Weaverbird Flats Farmers')
})
afterAll(async () => {
  await closeBrowser()
  await closeTestDatabase()
})

/** The ids held in one store of the tablet's IndexedDB, read without the app's code. */
function rawIds(page: Page, userId: number, store: 'visits' | 'photos') {
  return page.evaluate(({ name, store }) => new Promise<string[]>((resolve, reject) => {
    const open = indexedDB.open(name)
    open.onerror = () => reject(open.error)
    open.onsuccess = () => {
      const request = open.result.transaction(store, 'readonly').objectStore(store).getAllKeys()
      request.onsuccess = () => {
        resolve(request.result.map(String))
        open.result.close()
      }
    }
  }), { name: `furrowcast-field-${userId}`, store })
}

describe('erasure on the tablet', () => {
  it('drops the erased farm\'s visit and photo at the next sync', async () => {
    const me = (await User.findByPk(org.enumeratorId))!
    const round = await makeRound(org.coordinator, org.enumeratorId)
    const farm = `WB-${randomUUID().slice(0, 6)}`
    const visit = makeVisit(round, { farmCode: farm })
    const kept = makeVisit(round)
    expect((await org.enumerator.post('/api/sync/visits', { visits: [visit, kept] })).status).toBe(200)

    const context = await newTabletContext(browser)
    const page = await context.newPage()
    await page.goto('/signin?next=/field')
    await waitForApp(page)
    await page.getByLabel('E-mail').fill(me.email)
    await page.getByLabel('Password').fill(DEMO.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    await page.waitForURL(url => url.pathname === '/field')
    await openFieldStore(page)
    await poll(() => page.getByTestId('sync-last').textContent()).not.toContain('never')

    // The tablet holds both visits as synced, and a photo of the farm still waiting to go up.
    await page.evaluate(({ name, visits, photoId }) => new Promise<void>((resolve, reject) => {
      const open = indexedDB.open(name)
      open.onsuccess = () => {
        const tx = open.result.transaction(['visits', 'photos'], 'readwrite')
        const now = new Date().toISOString()
        for (const v of visits) tx.objectStore('visits').put({ ...v, consent: true, baseVersion: 1, state: 'synced', reviewState: 'received', reviewReason: null, errors: null, serverCopy: null, updatedAt: now, syncedAt: now })
        tx.objectStore('photos').put({ id: photoId, visitId: visits[0]!.id, blob: new Blob([new Uint8Array([0xFF, 0xD8, 0xFF, 0xE0, 1, 2, 3])], { type: 'image/jpeg' }), contentType: 'image/jpeg', size: 7, sha256: '0'.repeat(64), state: 'waiting', createdAt: now })
        tx.oncomplete = () => {
          open.result.close()
          resolve()
        }
        tx.onerror = () => reject(tx.error)
      }
    }), { name: `furrowcast-field-${me.id}`, visits: [visit, kept], photoId: randomUUID() })
    await page.reload()
    await openFieldStore(page)
    await waitForApp(page)
    const list = page.getByTestId('local-visit')
    await poll(() => list.filter({ hasText: farm }).count()).toBe(1)

    const erased = await org.coordinator.post('/api/privacy/erasures', { farmCode: farm, reason: 'The farmer withdrew consent' })
    expect(erased.status).toBe(200)

    const button = page.getByRole('button', { name: 'Sync now' })
    await poll(() => button.isEnabled()).toBe(true)
    await button.click()
    await poll(() => list.filter({ hasText: farm }).count()).toBe(0)
    expect(await list.filter({ hasText: kept.farmCode }).count()).toBe(1)
    expect(await page.getByText(farm).count()).toBe(0)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-after-erasure.png'), fullPage: true })
    expect(await rawIds(page, me.id, 'visits')).toEqual([kept.id])
    expect(await rawIds(page, me.id, 'photos')).toEqual([])
    await context.close()
  })
})
