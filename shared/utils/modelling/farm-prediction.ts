import type { DesignPlan } from '../stats/design'
import type { LinkName } from '../stats/links'
import { predictNew } from '../stats/predict'
import { ownValue } from '../schemas/safe-text'

/** What a publication sends to the tablets: enough to predict one farm, nothing about other farms. */
export interface PublishedModel {
  publicationId: number
  link: LinkName
  plan: DesignPlan
  coefficients: Array<{ term: string, label: string, estimate: number }>
}

export interface AnswerMover {
  covariate: string
  label: string
  /** The answer it was changed to, in words. */
  change: string
  /** Change in predicted probability (share, not points). */
  delta: number
}

export interface FarmPrediction {
  probability: number
  movers: AnswerMover[]
}

function predictOne(model: PublishedModel, row: Record<string, unknown>): number | null {
  // A question not answered yet is missing, not an error: no prediction until the answers are complete.
  if (model.plan.covariates.some(c => !c.dropped && (row[c.name] === undefined || row[c.name] === null || row[c.name] === ''))) return null
  return predictNew(model.plan, model.coefficients.map(c => c.estimate), model.link, [row])[0] ?? null
}

/**
 * One farm's predicted adoption from the published model, and the answers whose change would move it most:
 * a yes/no flipped, a choice set to its most favourable other option, a number raised by one unit.
 * A planning aid for follow-up visits; null while an answer the model needs is still missing.
 */
export function predictFarm(model: PublishedModel, answers: Record<string, unknown>): FarmPrediction | null {
  const probability = predictOne(model, answers)
  if (probability === null) return null
  const movers: AnswerMover[] = []
  for (const c of model.plan.covariates.filter(c => !c.dropped)) {
    const value = ownValue(answers, c.name)
    const tries: Array<[unknown, string]> = []
    if (c.type === 'yesno') {
      const yes = value === true || value === 1 || value === 'yes'
      tries.push([!yes, yes ? 'no' : 'yes'])
    }
    else if (c.type === 'categorical') {
      for (const level of c.levels ?? []) if (level !== value) tries.push([level, level])
    }
    else if (typeof value === 'number') {
      tries.push([value + 1, `${value + 1}`])
    }
    let best: AnswerMover | null = null
    for (const [changed, words] of tries) {
      const p = predictOne(model, { ...answers, [c.name]: changed })
      if (p === null) continue
      const delta = p - probability
      if (!best || Math.abs(delta) > Math.abs(best.delta)) best = { covariate: c.name, label: c.label, change: words, delta }
    }
    if (best) movers.push(best)
  }
  movers.sort((a, b) => Math.abs(b.delta) - Math.abs(a.delta))
  return { probability, movers: movers.slice(0, 3) }
}
