import type { CovariateSpec, ModelSpec } from '../stats/types'
import { conditionText } from '../asking'
import { NOT_ASKED_LEVEL, displayLabel, modelableQuestions, type ModelQuestion } from './questions'
import { SAMPLE_LIST_WEIGHTS, type ModelRequest } from './request'

export const VILLAGE_COLUMN = 'village'

export class ModelRequestError extends Error {
  constructor(readonly field: string, message: string) {
    super(message)
    this.name = 'ModelRequestError'
  }
}

/**
 * Turns the builder's choices into an engine specification, checking every choice against the questionnaire:
 * only numbers, yes/no and choices can be covariates; log and squares only for numbers; a reference level
 * only for choices.
 */
export function specFromRequest(request: ModelRequest, questions: readonly ModelQuestion[], outcomeKey: string): ModelSpec {
  const usable = new Map(modelableQuestions(questions, outcomeKey).map(q => [q.key, q]))
  const outcome = questions.find(q => q.key === outcomeKey)
  const covariates: CovariateSpec[] = request.covariates.map((choice, i) => {
    const [questionKey, optionCode] = choice.key.split('.') as [string, string | undefined]
    const question = usable.get(questionKey)
    if (!question) throw new ModelRequestError(`covariates.${i}`, `"${choice.key}" is not a number, yes/no, choice or several-answer question of this round`)
    // A question asked under a condition: the farms not asked must be treated explicitly, never silently.
    if (question.askWhen && !choice.notAsked) {
      throw new ModelRequestError(`covariates.${i}`, `${question.label} is asked only when ${conditionText(question.askWhen, questions)}: choose whether farms not asked count as 0 or are left out`)
    }
    if (!question.askWhen && choice.notAsked) throw new ModelRequestError(`covariates.${i}`, `${question.label} is asked at every farm: there are no farms not asked`)
    const notAsked = question.askWhen ? { notAsked: choice.notAsked } : {}
    if (question.type === 'several') {
      const option = question.options?.find(o => o.value === optionCode)
      if (!option) throw new ModelRequestError(`covariates.${i}`, `${question.label}: choose its options one by one (each is a yes/no term)`)
      if (choice.transform || choice.square || choice.reference) throw new ModelRequestError(`covariates.${i}`, `${question.label}: an option is a yes/no term, with no transform or reference`)
      return { name: choice.key, label: `${question.label}: ${option.label}`, type: 'yesno', ...notAsked }
    }
    if (optionCode !== undefined) throw new ModelRequestError(`covariates.${i}`, `${question.label} has no separate options to model`)
    const numeric = question.type === 'number' || question.type === 'whole'
    if ((choice.transform || choice.square) && !numeric) {
      throw new ModelRequestError(`covariates.${i}`, `${question.label}: transforms apply to numbers only`)
    }
    if (question.type === 'choice') {
      const levels = (question.options ?? []).map(o => o.value)
      const reference = choice.reference ?? levels[0]
      if (!reference || !levels.includes(reference)) throw new ModelRequestError(`covariates.${i}`, `${question.label}: unknown reference option "${choice.reference}"`)
      // Coded as their own group, the farms not asked get a level of their own (compared with the reference too).
      return { name: question.key, label: question.label, type: 'categorical', levels: choice.notAsked === 'zero' ? [...levels, NOT_ASKED_LEVEL] : levels, reference, ...notAsked }
    }
    if (choice.reference) throw new ModelRequestError(`covariates.${i}`, `${question.label}: a reference option applies to choice questions only`)
    if (question.type === 'yesno') return { name: question.key, label: question.label, type: 'yesno', ...notAsked }
    return { name: question.key, label: displayLabel(question), type: 'numeric', transform: choice.transform, square: choice.square, ...notAsked }
  })
  if (request.weights && request.weights !== SAMPLE_LIST_WEIGHTS && !questions.some(q => q.key === request.weights && (q.type === 'number' || q.type === 'whole'))) {
    throw new ModelRequestError('weights', 'Sampling weights must come from a number question')
  }
  // The heteroskedasticity test names model terms: a number's term carries its transform.
  const hetero = request.checks?.hetero.map((k) => {
    const c = covariates.find(x => x.name === k)!
    if (c.type === 'categorical') throw new ModelRequestError('checks.hetero', `${c.label}: the test of an uneven spread takes numbers and yes/no questions only`)
    return c.transform === 'log' ? `log(${k})` : c.transform === 'centre' ? `${k}_c` : k
  }) ?? []
  const checks = request.checks?.linkTest || hetero.length ? { checks: { linkTest: Boolean(request.checks?.linkTest), hetero } } : {}
  return {
    ...checks,
    outcome: outcomeKey,
    outcomeLabel: outcome?.label ?? 'adopted',
    covariates,
    interactions: request.interactions,
    link: request.link,
    weights: request.weights,
    ...(request.weights === SAMPLE_LIST_WEIGHTS ? { weightsLabel: 'sampling weight (farm not on a sample list)' } : {}),
    cluster: VILLAGE_COLUMN,
    se: request.villages === 'cluster' ? request.se : undefined,
    ...(request.villages && request.villages !== 'cluster' ? { villageTreatment: request.villages } : {}),
    margins: request.margins,
    bothMargins: true
  }
}

const LINK_SYMBOL: Record<string, string> = { probit: 'Φ', logit: 'Λ', cloglog: 'F_cloglog', cauchit: 'F_Cauchy' }

/** The model as one line people can read: P(adopt) = Φ(β₀ + β₁·farm size + …). */
export function equationText(spec: ModelSpec): string {
  const terms: string[] = []
  for (const c of spec.covariates) {
    const base = c.transform === 'log' ? `log ${c.label ?? c.name}` : c.transform === 'centre' ? `${c.label ?? c.name} (centred)` : (c.label ?? c.name)
    if (c.type === 'categorical') {
      for (const level of (c.levels ?? []).filter(l => l !== c.reference)) terms.push(`[${c.label ?? c.name} = ${level}]`)
    }
    else terms.push(base)
    if (c.square) terms.push(`${base}²`)
  }
  for (const [a, b] of spec.interactions ?? []) {
    const label = (name: string) => spec.covariates.find(c => c.name === name)?.label ?? name
    terms.push(`${label(a)} × ${label(b)}`)
  }
  // Several rounds: the engine adds one term per later round (and, following each farm, the farm's own level).
  if (spec.rounds) terms.push('[round = each later round]')
  const subscripts = '₀₁₂₃₄₅₆₇₈₉'
  const sub = (n: number) => String(n).split('').map(d => subscripts[Number(d)]).join('')
  const body = ['β₀', ...terms.map((t, i) => `β${sub(i + 1)}·${t}`)].join(' + ')
  const farm = spec.panelId && spec.villageTreatment === 'random-intercept' ? ' + u_farm' : ''
  return `P(${spec.outcomeLabel ? 'adopt' : spec.outcome} = 1) = ${LINK_SYMBOL[spec.link ?? 'probit']}(${body}${farm})`
}
