import type { CovariateChoice, ModelRequestInput } from '#shared/utils/modelling/request'

// The coordinator's model-builder choices: real client state that survives moving between pages.
export const useModelBuilderStore = defineStore('model-builder', () => {
  const roundId = ref<number | null>(null)
  const covariates = ref<CovariateChoice[]>([])
  const interactions = ref<Array<[string, string]>>([])
  const link = ref<'probit' | 'logit' | 'cloglog' | 'cauchit'>('probit')
  const se = ref<'cluster' | 'conventional' | 'hc1'>('cluster')
  const margins = ref<'ame' | 'mem'>('ame')
  const villages = ref<'cluster' | 'random-intercept' | 'survey'>('cluster')
  // Only the sampling plan uses weights; the question is picked when that plan is chosen.
  const weights = ref<string>('')
  // Checks run with the fit: the link test, and the characteristics for the test of an uneven spread.
  const linkTest = ref(false)
  const hetero = ref<string[]>([])
  // Several rounds together: the other rounds chosen and how the rounds enter the model (none: this round alone).
  const otherRounds = ref<number[]>([])
  const roundsModel = ref<'pooled' | 'farm-effects'>('pooled')

  function toggle(key: string, on: boolean) {
    covariates.value = on
      ? [...covariates.value.filter(c => c.key !== key), { key }]
      : covariates.value.filter(c => c.key !== key)
    if (!on) {
      interactions.value = interactions.value.filter(([a, b]) => a !== key && b !== key)
      hetero.value = hetero.value.filter(k => k !== key)
    }
  }

  function choice(key: string) {
    return covariates.value.find(c => c.key === key)
  }

  function update(key: string, patch: Partial<CovariateChoice>) {
    covariates.value = covariates.value.map(c => c.key === key ? { ...c, ...patch } : c)
  }

  function reset(round: number) {
    roundId.value = round
    covariates.value = []
    interactions.value = []
    hetero.value = []
    otherRounds.value = []
  }

  const request = computed<ModelRequestInput | null>(() => roundId.value === null
    ? null
    : {
        roundId: roundId.value, covariates: covariates.value, interactions: interactions.value, link: link.value, se: se.value, margins: margins.value,
        villages: villages.value, ...(villages.value === 'survey' && weights.value ? { weights: weights.value } : {}),
        checks: { linkTest: linkTest.value, hetero: link.value === 'probit' ? hetero.value : [] },
        ...(otherRounds.value.length ? { villages: 'cluster' as const, weights: undefined, several: { roundIds: otherRounds.value, model: roundsModel.value } } : {})
      })

  return { roundId, covariates, interactions, link, se, margins, villages, weights, linkTest, hetero, otherRounds, roundsModel, toggle, choice, update, reset, request }
})
