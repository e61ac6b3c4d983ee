import { describe, expect, it } from 'vitest'
import { predictFarm, type PublishedModel } from '../../../shared/utils/modelling/farm-prediction'
import { normCdf, runModel } from '../../../shared/utils/stats'

// Invented farms: adoption rises with extension contact and falls with distance.
function farms(n: number) {
  let s = 99
  const u = () => (s = (s * 16807) % 2147483647) / 2147483647
  return Array.from({ length: n }, () => {
    const distance = 1 + 20 * u()
    const extension = u() < 0.4
    const soil = ['loam', 'clay', 'sand'][Math.floor(u() * 3)]!
    const eta = 0.2 - 0.06 * distance + (extension ? 0.7 : 0) + (soil === 'clay' ? 0.3 : 0)
    return { adopted: eta + (u() - 0.5) * 2.5 > 0 ? 1 : 0, distance, extension, soil }
  })
}

describe('the tablet planning aid', () => {
  const results = JSON.parse(JSON.stringify(runModel(farms(600), {
    outcome: 'adopted',
    covariates: [{ name: 'distance', label: 'Distance (km)' }, { name: 'extension', label: 'Extension contact', type: 'yesno' }, { name: 'soil', label: 'Soil', type: 'categorical', reference: 'loam' }]
  })))
  const model: PublishedModel = { publicationId: 1, link: 'probit', plan: results.plan, coefficients: results.coefficients }
  const b = Object.fromEntries(results.coefficients.map((c: { term: string, estimate: number }) => [c.term, c.estimate])) as Record<string, number>
  const p = (distance: number, extension: boolean, soil: string) =>
    normCdf(b['(Intercept)']! + distance * b.distance! + (extension ? b.extension! : 0) + (soil === 'loam' ? 0 : b[`soil[${soil}]`]!))

  it('gives Φ(x′β) from the published coefficients for one farm\'s answers', () => {
    expect(predictFarm(model, { distance: 4, extension: false, soil: 'clay' })!.probability).toBeCloseTo(p(4, false, 'clay'), 12)
  })

  it('names the answers that move the prediction most, largest first, each by its best change', () => {
    const base = p(4, false, 'sand')
    const expected = [
      { covariate: 'extension', delta: p(4, true, 'sand') - base },
      { covariate: 'soil', delta: [p(4, false, 'loam'), p(4, false, 'clay')].map(x => x - base).sort((x, y) => Math.abs(y) - Math.abs(x))[0]! },
      { covariate: 'distance', delta: p(5, false, 'sand') - base }
    ].sort((x, y) => Math.abs(y.delta) - Math.abs(x.delta))
    const prediction = predictFarm(model, { distance: 4, extension: false, soil: 'sand' })!
    expect(prediction.movers.map(m => m.covariate)).toEqual(expected.map(e => e.covariate))
    prediction.movers.forEach((m, i) => expect(m.delta).toBeCloseTo(expected[i]!.delta, 12))
  })

  it('waits for every answer the model needs', () => {
    expect(predictFarm(model, { distance: 4, soil: 'clay' })).toBeNull()
  })
})
