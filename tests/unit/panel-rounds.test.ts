import { describe, expect, it } from 'vitest'
import { demoChecks, generateDemo } from '../../server/db/demo/field-demo'
import { EARLIER_SHARE, earlierVisits } from '../../server/db/demo/second-round'
import { severalRoundsSpec } from '../../server/utils/panel-data'
import { modelRequestSchema } from '../../shared/utils/modelling/request'
import { answersSchemaFor } from '../../shared/utils/schemas/visit'
import { runModel } from '../../shared/utils/stats'

describe('the demo\'s earlier round on the same farms', () => {
  const demo = generateDemo()
  const earlier = earlierVisits(demo.visits, demo.villages)

  it('is deterministic, visits a share of the same farms in the same villages, and passes the questionnaire', () => {
    expect(earlierVisits(demo.visits, demo.villages)[300]).toEqual(earlier[300])
    expect(earlier.length / demo.visits.length).toBeGreaterThan(EARLIER_SHARE - 0.04)
    expect(earlier.length / demo.visits.length).toBeLessThan(EARLIER_SHARE + 0.04)
    const later = new Map(demo.visits.map(v => [v.farmCode, v]))
    expect(earlier.every(v => later.get(v.farmCode)?.villageIndex === v.villageIndex)).toBe(true)
    const schema = answersSchemaFor(demo.questions, demoChecks())
    expect(earlier.every(v => schema.safeParse(v.answers).success)).toBe(true)
    expect(new Set(earlier.map(v => v.id)).size).toBe(earlier.length)
    expect(earlier.some(v => v.id === demo.visits[0]!.id)).toBe(false)
  })

  it('pooled with round effects, the later round is higher by about the 0.35 it was generated with', () => {
    const rows = [
      ...earlier.map(v => ({ ...v.answers, adopted: v.adopted, village: String(v.villageIndex), round: '1', farm: v.farmCode })),
      ...demo.visits.map(v => ({ ...v.answers, adopted: v.adopted, village: String(v.villageIndex), round: '2', farm: v.farmCode }))
    ]
    const covariates = ['farm_size_ha', 'household_size', 'schooling_years', 'age_head', 'female_head', 'dealer_distance_km', 'extension_contact', 'credit_access', 'group_member', 'livestock_tlu', 'owns_phone']
      .map(name => ({ name, type: typeof demo.visits[0]!.answers[name] === 'boolean' ? 'yesno' as const : 'numeric' as const }))
    const r = runModel(rows, { outcome: 'adopted', covariates, cluster: 'village', link: 'probit', rounds: 'round', panelId: 'farm' })
    const shift = r.coefficients.find(c => c.term === 'round[2]')!
    // Two standard errors either side of the generating value (the village effect is not in this model, which
    // attenuates probit coefficients a little: common practice to allow for it).
    expect(Math.abs(shift.estimate - 0.35)).toBeLessThan(2.5 * shift.se!)
    const t = r.rounds!.transitions[0]!
    expect(t.farmsInBoth).toBe(earlier.length)
    expect(t.adopted).toBeGreaterThan(50)
    expect(t.disAdopted).toBeGreaterThan(20)
  })
})

describe('several rounds in the model request', () => {
  const base = { roundId: 4, covariates: [{ key: 'farm_size_ha' }] }
  it('refuses the request\'s own round, the sampling plan, and farm effects with a curve other than probit or logit', () => {
    expect(modelRequestSchema.safeParse({ ...base, several: { roundIds: [4] } }).success).toBe(false)
    expect(modelRequestSchema.safeParse({ ...base, several: { roundIds: [5, 5] } }).success).toBe(false)
    expect(modelRequestSchema.safeParse({ ...base, villages: 'survey', weights: 'w', several: { roundIds: [5] } }).success).toBe(false)
    expect(modelRequestSchema.safeParse({ ...base, link: 'cloglog', several: { roundIds: [5], model: 'farm-effects' } }).success).toBe(false)
    expect(modelRequestSchema.safeParse({ ...base, link: 'logit', several: { roundIds: [5], model: 'farm-effects' } }).success).toBe(true)
    expect(modelRequestSchema.safeParse({ ...base, several: { roundIds: [5, 6, 7, 8, 9, 10, 11, 12, 13] } }).success).toBe(false)
  })

  it('turns farm effects into the engine\'s farm random intercept with round effects', () => {
    const spec = { outcome: 'adopted', covariates: [{ name: 'x' }], cluster: 'village', se: 'cluster' as const }
    expect(severalRoundsSpec(spec, { roundIds: [2], model: 'pooled' })).toMatchObject({ rounds: '_round', panelId: '_farm', se: 'cluster' })
    const farm = severalRoundsSpec(spec, { roundIds: [2], model: 'farm-effects' })
    expect(farm).toMatchObject({ rounds: '_round', panelId: '_farm', villageTreatment: 'random-intercept' })
    expect(farm.se).toBeUndefined()
  })
})
