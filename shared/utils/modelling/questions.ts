import type { Condition } from '../schemas/conditions'

// What the modelling side needs to know of a questionnaire question. Structurally a subset of the
// questionnaire schema's Question, so either can be passed.
export interface ModelQuestion {
  key: string
  label: string
  type: 'number' | 'whole' | 'yesno' | 'choice' | 'several' | 'date' | 'text'
  unit?: string
  options?: Array<{ value: string, label: string }>
  /** Asked only when this condition holds (the questionnaire's askWhen); farms not asked need an explicit treatment. */
  askWhen?: Condition
}

/** How a model treats the farms a conditional question was not asked at. */
export const NOT_ASKED_CHOICES = ['zero', 'asked-only'] as const
export type NotAskedChoice = typeof NOT_ASKED_CHOICES[number]

/** The level a choice question gets for farms not asked when the builder codes them as their own group. */
export const NOT_ASKED_LEVEL = '(not asked)'

/** For the builder: of the accepted visits, how many answered a conditional question and how many were not asked. */
export interface AskingCounts {
  /** The condition in words. */
  condition: string
  answered: number
  notAsked: number
}

/** A several-answer question's options become one yes/no term each, named question.option. */
export function optionTermKey(questionKey: string, option: string): string {
  return `${questionKey}.${option}`
}

/** Questions a model can use as covariates: numbers, yes/no, single choices and the options of several-answer questions; never the outcome itself. */
export function modelableQuestions(questions: readonly ModelQuestion[], outcomeKey: string): ModelQuestion[] {
  return questions.filter(q => q.key !== outcomeKey && (q.type === 'number' || q.type === 'whole' || q.type === 'yesno' || q.type === 'choice' || q.type === 'several'))
}

export function displayLabel(question: ModelQuestion): string {
  return question.unit ? `${question.label} (${question.unit})` : question.label
}
