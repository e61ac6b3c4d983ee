import { describe, expect, it } from 'vitest'
import { equationText, ModelRequestError, modelRequestSchema, readMarginalEffect, specFromRequest, type ModelQuestion } from '../../../shared/utils/modelling'

const questions: ModelQuestion[] = [
  { key: 'adopted', label: 'Adopted the seed this season', type: 'yesno' },
  { key: 'farm_size', label: 'Farm size', type: 'number', unit: 'ha' },
  { key: 'extension', label: 'Extension contact last season', type: 'yesno' },
  { key: 'soil', label: 'Soil type', type: 'choice', options: [{ value: 'loam', label: 'Loam' }, { value: 'clay', label: 'Clay' }, { value: 'sand', label: 'Sand' }] },
  { key: 'visit_date', label: 'Date', type: 'date' },
  { key: 'credit', label: 'Access to credit', type: 'yesno' },
  { key: 'credit_source', label: 'Credit source', type: 'choice', options: [{ value: 'bank', label: 'Bank' }, { value: 'group', label: 'Savings group' }], askWhen: { join: 'all', tests: [{ question: 'credit', test: 'equals', value: true }] } },
  { key: 'heard', label: 'Heard from', type: 'several', options: [{ value: 'radio', label: 'Radio' }, { value: 'neighbour', label: 'Neighbour' }] },
  { key: 'seed_kg', label: 'Seed bought', type: 'number', unit: 'kg', askWhen: { join: 'all', tests: [{ question: 'credit', test: 'equals', value: true }] } }
]

const request = (body: unknown) => modelRequestSchema.parse(body)

describe('model builder choices → engine specification', () => {
  it('maps numbers, yes/no and choices, with a chosen reference and village clustering by default', () => {
    const spec = specFromRequest(request({
      roundId: 1,
      covariates: [{ key: 'farm_size', transform: 'log' }, { key: 'extension' }, { key: 'soil', reference: 'clay' }]
    }), questions, 'adopted')
    expect(spec.link).toBe('probit')
    expect(spec.se).toBe('cluster')
    expect(spec.cluster).toBe('village')
    expect(spec.covariates).toEqual([
      { name: 'farm_size', label: 'Farm size (ha)', type: 'numeric', transform: 'log', square: undefined },
      { name: 'extension', label: 'Extension contact last season', type: 'yesno' },
      { name: 'soil', label: 'Soil type', type: 'categorical', levels: ['loam', 'clay', 'sand'], reference: 'clay' }
    ])
    expect(equationText(spec)).toBe('P(adopt = 1) = Φ(β₀ + β₁·log Farm size (ha) + β₂·Extension contact last season + β₃·[Soil type = loam] + β₄·[Soil type = sand])')
  })

  it('passes the checks on as model terms: a logged number by its log term, nothing when none is asked', () => {
    const spec = specFromRequest(request({
      roundId: 1, covariates: [{ key: 'farm_size', transform: 'log' }, { key: 'extension' }, { key: 'soil' }],
      checks: { linkTest: true, hetero: ['farm_size', 'extension'] }
    }), questions, 'adopted')
    expect(spec.checks).toEqual({ linkTest: true, hetero: ['log(farm_size)', 'extension'] })
    expect(specFromRequest(request({ roundId: 1, covariates: [{ key: 'extension' }] }), questions, 'adopted').checks).toBeUndefined()
    expect(() => specFromRequest(request({ roundId: 1, covariates: [{ key: 'soil' }], checks: { hetero: ['soil'] } }), questions, 'adopted')).toThrow(/numbers and yes\/no/)
    expect(modelRequestSchema.safeParse({ roundId: 1, covariates: [{ key: 'extension' }], link: 'logit', checks: { hetero: ['extension'] } }).success).toBe(false)
    expect(modelRequestSchema.safeParse({ roundId: 1, covariates: [{ key: 'extension' }], checks: { hetero: ['farm_size'] } }).success).toBe(false)
  })

  it.each([
    [{ covariates: [{ key: 'visit_date' }] }, /not a number, yes\/no, choice or several-answer/],
    [{ covariates: [{ key: 'adopted' }] }, /not a number, yes\/no, choice or several-answer/],
    [{ covariates: [{ key: 'extension', square: true }] }, /numbers only/],
    [{ covariates: [{ key: 'soil', reference: 'peat' }] }, /unknown reference/],
    [{ covariates: [{ key: 'farm_size', reference: 'x' }] }, /choice questions only/],
    [{ covariates: [{ key: 'farm_size' }], weights: 'extension' }, /number question/]
  ])('refuses %j', (body, message) => {
    expect(() => specFromRequest(request({ roundId: 1, ...body }), questions, 'adopted')).toThrow(ModelRequestError)
    expect(() => specFromRequest(request({ roundId: 1, ...body }), questions, 'adopted')).toThrow(message)
  })

  it('offers one yes/no term per option of a several-answer question, and never the question as a whole', () => {
    const spec = specFromRequest(request({ roundId: 1, covariates: [{ key: 'heard.radio' }, { key: 'heard.neighbour' }] }), questions, 'adopted')
    expect(spec.covariates).toEqual([
      { name: 'heard.radio', label: 'Heard from: Radio', type: 'yesno' },
      { name: 'heard.neighbour', label: 'Heard from: Neighbour', type: 'yesno' }
    ])
    expect(() => specFromRequest(request({ roundId: 1, covariates: [{ key: 'heard' }] }), questions, 'adopted')).toThrow(/choose its options one by one/)
    expect(() => specFromRequest(request({ roundId: 1, covariates: [{ key: 'heard.tv' }] }), questions, 'adopted')).toThrow(/choose its options one by one/)
    expect(() => specFromRequest(request({ roundId: 1, covariates: [{ key: 'farm_size.x' }] }), questions, 'adopted')).toThrow(/no separate options/)
  })

  it('makes the coordinator say how farms not asked a conditional question are treated', () => {
    expect(() => specFromRequest(request({ roundId: 1, covariates: [{ key: 'seed_kg' }] }), questions, 'adopted'))
      .toThrow('Seed bought is asked only when Access to credit is Yes: choose whether farms not asked count as 0 or are left out')
    expect(() => specFromRequest(request({ roundId: 1, covariates: [{ key: 'farm_size', notAsked: 'zero' }] }), questions, 'adopted')).toThrow(/asked at every farm/)
    const spec = specFromRequest(request({ roundId: 1, covariates: [{ key: 'seed_kg', notAsked: 'asked-only' }, { key: 'credit_source', notAsked: 'zero' }] }), questions, 'adopted')
    expect(spec.covariates[0]).toMatchObject({ name: 'seed_kg', type: 'numeric', notAsked: 'asked-only' })
    // Counted as "0", a choice's farms not asked form a group of their own beside the options.
    expect(spec.covariates[1]).toMatchObject({ name: 'credit_source', type: 'categorical', levels: ['bank', 'group', '(not asked)'], reference: 'bank', notAsked: 'zero' })
  })

  it('checks interactions and duplicates in the request schema itself', () => {
    expect(modelRequestSchema.safeParse({ roundId: 1, covariates: [{ key: 'farm_size' }, { key: 'farm_size' }] }).success).toBe(false)
    expect(modelRequestSchema.safeParse({ roundId: 1, covariates: [{ key: 'farm_size' }], interactions: [['farm_size', 'extension']] }).success).toBe(false)
    expect(modelRequestSchema.safeParse({ roundId: 1, covariates: [] }).success).toBe(false)
  })
})

describe('one-line readings of marginal effects', () => {
  const base = { covariate: 'extension', label: 'Contact with an extension officer last season?: yes vs no', kind: 'discrete' as const, level: 'yes', reference: 'no', se: 0.025, z: 4.8 }

  it('reads a significant yes/no effect in percentage points, as an association', () => {
    expect(readMarginalEffect({ ...base, estimate: 0.12, p: 0.0001, ciLow: 0.071, ciHigh: 0.169 }))
      .toBe('Answering yes to “Contact with an extension officer last season?” goes with a 12.0-point higher adoption probability (95% CI 7.1 to 16.9 points).')
  })

  it('reads a negative effect per unit, without repeating the unit', () => {
    expect(readMarginalEffect({ ...base, covariate: 'distance', label: 'Distance to the nearest input dealer (km)', kind: 'derivative', level: undefined, reference: undefined, estimate: -0.0134, p: 0.001, ciLow: -0.02, ciHigh: -0.0068 }, 'km'))
      .toBe('Each additional km of distance to the nearest input dealer goes with a 1.3-point lower adoption probability (95% CI 0.7 to 2.0 points).')
  })

  it('reads a choice level against its reference', () => {
    expect(readMarginalEffect({ ...base, covariate: 'soil', label: 'Soil type: clay vs loam', level: 'clay', reference: 'loam', estimate: 0.08, p: 0.01, ciLow: 0.02, ciHigh: 0.14 }))
      .toBe('Soil type: clay rather than loam goes with an 8.0-point higher adoption probability (95% CI 2.0 to 14.0 points).')
  })

  it('never repeats the unit: a label that starts with its unit reads as one unit of the rest', () => {
    const years = { ...base, covariate: 'schooling_years', label: 'Years of schooling (years)', kind: 'derivative' as const, level: undefined, reference: undefined, estimate: 0.011, p: 0.002, ciLow: 0.004, ciHigh: 0.018 }
    expect(readMarginalEffect(years, 'years')).toBe('Each additional year of schooling goes with a 1.1-point higher adoption probability (95% CI 0.4 to 1.8 points).')
    expect(readMarginalEffect({ ...years, label: 'Farm size (ha)' }, 'ha')).toMatch(/^Each additional ha of farm size goes with/)
    expect(readMarginalEffect({ ...years, label: 'Age of the household head' })).toMatch(/^Each one-unit increase in age of the household head goes with/)
  })

  it('says nothing for an effect that is not significant at 5 %', () => {
    expect(readMarginalEffect({ ...base, estimate: 0.02, p: 0.4, ciLow: -0.03, ciHigh: 0.07 })).toBeNull()
  })
})
