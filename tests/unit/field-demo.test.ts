import { describe, expect, it } from 'vitest'
import { designFromMatrix, fitBinary } from '../../shared/utils/stats/index'
import { TRUE_BETA, demoChecks, generateDemo } from '../../server/db/demo/field-demo'
import { questionnaireDefinitionSchema } from '../../shared/utils/schemas/questionnaire'
import { answersSchemaFor, notAskedKeys } from '../../shared/utils/schemas/visit'

describe('demo field data', () => {
  const demo = generateDemo()

  it('is deterministic and the right size', () => {
    const again = generateDemo()
    expect(demo.visits).toHaveLength(1500)
    expect(demo.villages).toHaveLength(24)
    expect(again.visits[700]).toEqual(demo.visits[700])
    expect(new Set(demo.visits.map(v => v.id)).size).toBe(1500)
    expect(new Set(demo.visits.map(v => v.farmCode)).size).toBe(1500)
    expect(questionnaireDefinitionSchema.safeParse({ questions: demo.questions, checks: demoChecks() }).success).toBe(true)
  })

  it('asks the credit source only with credit, and takes several sources of news, each visit passing the schema', () => {
    const schema = answersSchemaFor(demo.questions, demoChecks())
    expect(demo.visits.every(v => schema.safeParse(v.answers).success)).toBe(true)
    const withCredit = demo.visits.filter(v => v.answers.credit_access === true)
    expect(withCredit.length).toBeGreaterThan(200)
    expect(withCredit.every(v => typeof v.answers.credit_source === 'string' && notAskedKeys(demo.questions, v.answers).length === 0)).toBe(true)
    expect(demo.visits.filter(v => v.answers.credit_access === false).every(v => v.answers.credit_source === undefined && notAskedKeys(demo.questions, v.answers)[0] === 'credit_source')).toBe(true)
    const heard = demo.visits.map(v => v.answers.heard_from as string[])
    expect(heard.filter(h => h.length >= 2).length).toBeGreaterThan(300)
    expect(heard.filter(h => h.includes('radio')).length).toBeGreaterThan(500)
  })

  it('lets a probit fit recover the signs of the true coefficients', () => {
    const keys = Object.keys(TRUE_BETA).filter(k => k !== 'intercept') as Array<keyof typeof TRUE_BETA>
    const k = keys.length + 1
    const X = new Float64Array(demo.visits.length * k)
    const y = new Float64Array(demo.visits.length)
    demo.visits.forEach((v, i) => {
      X[i * k] = 1
      keys.forEach((key, j) => {
        X[i * k + j + 1] = Number(v.answers[key])
      })
      y[i] = v.adopted
    })
    const rate = y.reduce((a, b) => a + b, 0) / y.length
    expect(rate).toBeGreaterThan(0.2)
    expect(rate).toBeLessThan(0.6)
    const fit = fitBinary(designFromMatrix(X, y, keys), 'probit')
    expect(fit.converged).toBe(true)
    // The strong effects must come out with their true signs.
    for (const key of ['extension_contact', 'credit_access', 'group_member', 'dealer_distance_km', 'farm_size_ha', 'schooling_years'] as const) {
      expect(Math.sign(fit.coef[keys.indexOf(key) + 1]!)).toBe(Math.sign(TRUE_BETA[key]))
    }
  })
})
