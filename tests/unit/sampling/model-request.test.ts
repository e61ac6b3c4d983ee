import { describe, expect, it } from 'vitest'
import { ModelRequestError, SAMPLE_LIST_WEIGHTS, modelRequestSchema, specFromRequest, type ModelQuestion } from '../../../shared/utils/modelling'

const questions: ModelQuestion[] = [
  { key: 'adopted', label: 'Adopted the seed this season', type: 'yesno' },
  { key: 'farm_size', label: 'Farm size', type: 'number', unit: 'ha' },
  { key: 'survey_weight', label: 'Weight typed by the team', type: 'number' },
  { key: 'soil', label: 'Soil type', type: 'choice', options: [{ value: 'loam', label: 'Loam' }, { value: 'clay', label: 'Clay' }] }
]

describe('"Follow the sampling plan" with weights from the sample lists', () => {
  it('takes the sample lists as the weights of a survey design', () => {
    const request = modelRequestSchema.parse({ roundId: 3, covariates: [{ key: 'farm_size' }], villages: 'survey', weights: SAMPLE_LIST_WEIGHTS })
    const spec = specFromRequest(request, questions, 'adopted')
    expect(spec).toMatchObject({ weights: 'sample-lists', weightsLabel: 'sampling weight (farm not on a sample list)', cluster: 'village', villageTreatment: 'survey' })
  })

  it('still takes a number question, and no other question or name', () => {
    const byQuestion = specFromRequest(modelRequestSchema.parse({ roundId: 3, covariates: [{ key: 'farm_size' }], villages: 'survey', weights: 'survey_weight' }), questions, 'adopted')
    expect(byQuestion.weights).toBe('survey_weight')
    expect(byQuestion.weightsLabel).toBeUndefined()
    expect(() => specFromRequest(modelRequestSchema.parse({ roundId: 3, covariates: [{ key: 'farm_size' }], villages: 'survey', weights: 'soil' }), questions, 'adopted')).toThrow(ModelRequestError)
    expect(modelRequestSchema.safeParse({ roundId: 3, covariates: [{ key: 'farm_size' }], villages: 'survey', weights: 'sample-list' }).success).toBe(false)
  })

  it('asks for the weights when the sampling plan is chosen without them', () => {
    const parsed = modelRequestSchema.safeParse({ roundId: 3, covariates: [{ key: 'farm_size' }], villages: 'survey' })
    expect(parsed.success).toBe(false)
    expect(parsed.error!.issues[0]!.message).toBe('The sampling plan needs the sampling weights: from the sample lists or a question')
  })
})
