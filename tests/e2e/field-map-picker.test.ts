import path from 'node:path'
import { PNG } from 'pngjs'
import { describe, expect, it } from 'vitest'
import { User, Village, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { watchConsole } from '../support/console'
import { makeRound } from '../support/field'
import { poll, signInPage, useBrowser } from '../support/pages'
import { demoUser, freshClient } from '../support/server'
import { openFieldStore } from '../support/field-pin'

// With no GPS fix, the enumerator picks the farm's position on a map of the village: the map's code loads only
// when asked for, and the village is drawn from the round's own data (no tiles), so it works offline too.
const opened = useBrowser()

/** The colour of one screen pixel of a PNG screenshot. */
function pixel(png: Buffer, x: number, y: number) {
  const image = PNG.sync.read(png)
  const at = (Math.round(y) * image.width + Math.round(x)) * 4
  return [image.data[at]!, image.data[at + 1]!, image.data[at + 2]!]
}
const near = (a: number[], b: number[], tolerance = 40) => a.every((v, i) => Math.abs(v - b[i]!) <= tolerance)
const AMBER = [0xd9, 0x9a, 0x1e]

describe('picking the farm\'s position on a map', () => {
  it('loads the map only when opened, draws the village outline, and the picked point reaches the form and the stored visit', async () => {
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const round = await makeRound(coordinator, me!.id)
    // Village A gets an outline (a square of about 2 km around its centre); village B keeps only its centre.
    const d = 0.01
    const { lat, lon } = round.centre
    await Village.update({ boundary: { type: 'Polygon', coordinates: [[[lon - d, lat - d], [lon + d, lat - d], [lon + d, lat + d], [lon - d, lat + d], [lon - d, lat - d]]] } }, { where: { id: round.assignedVillageId } })
    expect((await coordinator.request('PUT', `/api/rounds/${round.roundId}/assignments`, { assignments: [
      { userId: me!.id, villageId: round.assignedVillageId }, { userId: me!.id, villageId: round.otherVillageId }
    ] })).status).toBe(200)

    const context = await newTabletContext(opened.browser)
    const page = await context.newPage()
    await page.setViewportSize({ width: 820, height: 1180 })
    const problems = watchConsole(page)
    await signInPage(page, demoUser('enumerator').email, '/field')
    await openFieldStore(page)
    await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
    await page.goto(`/field/visit?round=${round.roundId}`)
    await openFieldStore(page)
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    const code = `PICKED-${Date.now().toString(36).toUpperCase()}`
    await page.getByLabel('Farm code *').fill(code)
    await page.getByRole('button', { name: 'No fix: type the position' }).click()
    await page.getByLabel(/Why there is no GPS fix/).fill('Under the mango trees, no signal')
    // No village yet: the picker says what it needs instead of opening on nowhere.
    expect(await page.getByRole('button', { name: 'Pick the position on a map' }).isDisabled()).toBe(true)
    expect(await page.getByText('Choose the village above first').isVisible()).toBe(true)
    await page.getByLabel('Village *').selectOption(String(round.assignedVillageId))
    // Leaflet sets window.L when its code runs: not part of the form's first load.
    expect(await page.evaluate(() => 'L' in window)).toBe(false)
    await page.getByRole('button', { name: 'Pick the position on a map' }).click()
    const map = page.getByTestId('map-picker-map')
    await poll(() => map.locator('.leaflet-overlay-pane path').count(), 15_000).toBeGreaterThan(0).catch(async (error) => {
      await page.screenshot({ path: path.join(SCREENSHOTS, 'field-map-picker-failed.png'), fullPage: true })
      console.log(problems, await map.innerHTML())
      throw error
    })
    expect(await page.evaluate(() => 'L' in window)).toBe(true)
    expect(await page.getByTestId('map-picker').innerText()).toContain('The green shape is the outline of Test village')
    expect(await page.getByTestId('map-picker-no-tiles').innerText()).toContain('No background map on this tablet')

    // Tap a quarter of the way up and right of the map's middle, inside the outline.
    const box = (await map.boundingBox())!
    const tap = { x: box.width / 2 + 60, y: box.height / 2 - 40 }
    await map.click({ position: tap })
    const picked = page.getByTestId('map-picked')
    await poll(() => picked.innerText()).toMatch(/^Picked: -13\.\d{5}, 31\.\d{5}$/)
    const [, shownLat, shownLon] = /Picked: (\S+), (\S+)/.exec(await picked.innerText())!
    // North-east of the centre, within the outline.
    expect(Number(shownLat)).toBeGreaterThan(lat)
    expect(Number(shownLat)).toBeLessThan(lat + d)
    expect(Number(shownLon)).toBeGreaterThan(lon)
    expect(Number(shownLon)).toBeLessThan(lon + d)
    expect(Number(await page.getByLabel(/Latitude/).inputValue())).toBeCloseTo(Number(shownLat), 5)
    expect(Number(await page.getByLabel(/Longitude/).inputValue())).toBeCloseTo(Number(shownLon), 5)
    // The point is on the screen where it was tapped: the composed map shows the marker's amber there.
    const shot = await map.screenshot({ path: path.join(SCREENSHOTS, 'field-map-picker.png') })
    expect(near(pixel(shot, tap.x, tap.y), AMBER)).toBe(true)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-map-picker-form.png'), fullPage: true })

    await page.locator('#q-farm_size_ha').fill('1.5')
    await page.locator('#q-household_size').fill('4')
    await page.locator('input[name="q-adopted"][value="true"]').check({ force: true })
    await page.getByRole('button', { name: 'Save visit' }).click()
    await poll(async () => (await page.getByTestId('visit-saved').locator('h2').textContent())?.trim()).toBe('Saved')
    const stored = async () => (await Visit.findOne({ where: { farmCode: code } }))
    await poll(async () => (await stored())?.lat ?? null, 20_000).toBeCloseTo(Number(shownLat), 5)
    expect((await stored())!.lon).toBeCloseTo(Number(shownLon), 5)
    expect((await stored())!.manualLocationReason).toBe('Under the mango trees, no signal')
    expect(problems).toEqual([])
    await context.close()
  }, 120_000)

  it('works offline on a village known only by its centre, and says so', async () => {
    const coordinator = freshClient()
    await coordinator.signIn(demoUser('coordinator').email)
    const me = await User.findOne({ where: { email: demoUser('enumerator').email } })
    const round = await makeRound(coordinator, me!.id)
    // The service worker precaches the build's files, the map's chunk among them, on the first online visit.
    const context = await newTabletContext(opened.browser, { serviceWorkers: 'allow' })
    const page = await context.newPage()
    await page.setViewportSize({ width: 820, height: 1180 })
    await signInPage(page, demoUser('enumerator').email, '/field')
    await openFieldStore(page)
    await poll(() => page.getByTestId('field-village').count(), 20_000).toBeGreaterThan(0)
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.ready).active))).toBe(true)
    await page.goto(`/field/visit?round=${round.roundId}&village=${round.assignedVillageId}`)
    await openFieldStore(page)
    expect(await page.evaluate(() => navigator.serviceWorker.controller !== null)).toBe(true)
    await page.getByRole('checkbox', { name: /informed consent/ }).check()
    await page.waitForURL(/\/field\/visit\?id=/)
    await page.getByRole('button', { name: 'No fix: type the position' }).click()
    await context.setOffline(true)
    await page.getByRole('button', { name: 'Pick the position on a map' }).click()
    const picker = page.getByTestId('map-picker')
    await poll(() => picker.innerText(), 15_000).toContain('Only the centre of Test village')
    expect(await picker.innerText()).toContain('the dashed rings are 1 and 2 km from it')
    expect(await page.getByTestId('map-picker-no-tiles').innerText()).toContain('place the point by its distance and direction from the centre')
    // Keyboard or steady hand: the point goes where the cross is, the map's middle (the village centre at first).
    await page.getByRole('button', { name: 'Put the point at the cross' }).click()
    await poll(() => page.getByTestId('map-picked').innerText()).toBe(`Picked: ${round.centre.lat.toFixed(5)}, ${round.centre.lon.toFixed(5)}`)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'field-map-picker-offline.png'), fullPage: true })
    await context.setOffline(false)
    await context.close()
  }, 90_000)
})
