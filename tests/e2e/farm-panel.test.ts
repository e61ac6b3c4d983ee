import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { Round, Visit } from '../../server/db/models'
import { SCREENSHOTS, newTabletContext } from '../support/browser'
import { demoUser } from '../support/server'
import { poll, signInPage, useBrowser } from '../support/pages'

// The same farms across rounds, as a coordinator sees them: the builder's "several rounds together", the results
// page's round effects and adoption/dis-adoption table, and review's other rounds of a farm.
const holder = useBrowser()

async function demoRounds() {
  const rounds = await Round.findAll({ where: { technology: 'drought-tolerant sorghum seed (Ombara Gold)' }, order: [['id', 'ASC']] })
  return { main: rounds[0]!, earlier: rounds[1]! }
}

describe('several rounds together', () => {
  it('builds a model over two rounds and reads its round effects and transitions on the results page', async () => {
    const { main, earlier } = await demoRounds()
    const context = await newTabletContext(holder.browser)
    const page = await context.newPage()
    await signInPage(page, demoUser('coordinator').email, '/models')
    await page.goto(`/models?round=${main.id}`)
    await page.getByLabel('Farm size').check()
    await page.getByLabel('Contact with an extension officer last season?').check()
    const several = page.getByTestId('several-rounds')
    await poll(() => several.textContent()).toContain(earlier.name)
    await several.getByLabel(earlier.name).check()
    await several.getByText('All visits together, each round with its own adoption level').click()
    const both = await Visit.count({ where: { roundId: [main.id, earlier.id], reviewState: 'accepted' } })
    await poll(() => page.getByTestId('model-preview').textContent(), 20_000).toContain(`${both} accepted visits will be used`)
    await page.screenshot({ path: path.join(SCREENSHOTS, 'builder-several-rounds.png'), fullPage: true })
    await page.getByRole('button', { name: 'Fit the model' }).click()
    await page.waitForURL(/\/models\/\d+$/)
    const panel = page.getByTestId('rounds-panel')
    await poll(() => panel.count(), 60_000).toBe(1)
    const effects = await page.getByTestId('round-effects').innerText()
    expect(effects).toContain(`2. ${main.name}`)
    expect(effects).toMatch(/Change in adoption, points/)
    expect(effects).toMatch(/\d+\.\d/)
    const transitions = await page.getByTestId('round-transitions').innerText()
    expect(transitions).toContain(`1. ${earlier.name} → 2. ${main.name}`)
    const farmsInBoth = await Visit.count({ where: { roundId: earlier.id, reviewState: 'accepted' } })
    expect(transitions.replace(/,/g, '')).toContain(String(farmsInBoth))
    expect(transitions).toMatch(/Gave up \(dis-adopted\)/)
    // Nothing of it hidden under something else: the table's first cell is the element on top at its centre.
    const cell = page.getByTestId('round-transitions').locator('tbody td').first()
    await cell.scrollIntoViewIfNeeded()
    expect(await cell.evaluate((el) => {
      const r = el.getBoundingClientRect()
      const top = document.elementFromPoint(r.left + r.width / 2, r.top + r.height / 2)
      return top === el || el.contains(top)
    })).toBe(true)
    // A model over several rounds is not offered for publication.
    expect(await page.locator('#publish-heading').count()).toBe(0)
    await panel.screenshot({ path: path.join(SCREENSHOTS, 'results-several-rounds.png') })
    await page.screenshot({ path: path.join(SCREENSHOTS, 'results-several-rounds-page.png'), fullPage: true })
    await context.close()
  })

  it('offers the farms across rounds on the round page, pseudonymised, as a download that answers a zip', async () => {
    const { main, earlier } = await demoRounds()
    const context = await newTabletContext(holder.browser)
    const page = await context.newPage()
    await signInPage(page, demoUser('coordinator').email, `/rounds/${main.id}`)
    const part = page.getByTestId('panel-export')
    await poll(() => part.textContent()).toContain('The same farms across rounds')
    expect(await part.getByRole('link', { name: /Download the farms across rounds/ }).count()).toBe(0)
    await part.getByLabel(earlier.name).check()
    const link = part.getByRole('link', { name: 'Download the farms across rounds (zip)' })
    await poll(() => link.count()).toBe(1)
    const href = (await link.getAttribute('href'))!
    expect(href).toContain(`with=${earlier.id}`)
    const answer = await page.request.get(href)
    expect(answer.status()).toBe(200)
    expect(answer.headers()['content-type']).toBe('application/zip')
    await part.scrollIntoViewIfNeeded()
    await part.screenshot({ path: path.join(SCREENSHOTS, 'round-panel-export.png') })
    await context.close()
  })

  it('shows a farm\'s earlier round in review', async () => {
    const { main, earlier } = await demoRounds()
    const farmCode = (await Visit.findOne({ where: { roundId: earlier.id }, order: [['farmCode', 'ASC']] }))!.farmCode
    const earlierVisit = (await Visit.findOne({ where: { roundId: earlier.id, farmCode } }))!
    const context = await newTabletContext(holder.browser)
    const page = await context.newPage()
    await signInPage(page, demoUser('coordinator').email, `/review?roundId=${main.id}&farm=${encodeURIComponent(farmCode)}`)
    await poll(() => page.getByTestId('review-row').first().textContent()).toContain(farmCode)
    await page.getByTestId('review-row').first().click()
    const other = page.getByTestId('review-other-rounds')
    await poll(() => other.textContent()).toContain(earlier.name)
    const text = await other.innerText()
    expect(text).toContain('This farm in other rounds')
    expect(text).toContain(earlierVisit.adopted ? 'Yes' : 'No')
    expect(text).toContain(`${earlierVisit.answers.farm_size_ha} ha`)
    await other.scrollIntoViewIfNeeded()
    await page.screenshot({ path: path.join(SCREENSHOTS, 'review-other-rounds.png') })
    await context.close()
  })
})
