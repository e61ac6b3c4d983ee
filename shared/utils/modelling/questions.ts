// What the modelling side needs to know of a questionnaire question. Structurally a subset of the
// questionnaire schema's Question, so either can be passed.
export interface ModelQuestion {
  key: string
  label: string
  type: 'number' | 'whole' | 'yesno' | 'choice' | 'date' | 'text'
  unit?: string
  options?: Array<{ value: string, label: string }>
}

/** Questions a model can use as covariates: numbers, yes/no and single choices; never the outcome itself. */
export function modelableQuestions(questions: readonly ModelQuestion[], outcomeKey: string): ModelQuestion[] {
  return questions.filter(q => q.key !== outcomeKey && (q.type === 'number' || q.type === 'whole' || q.type === 'yesno' || q.type === 'choice'))
}

export function displayLabel(question: ModelQuestion): string {
  return question.unit ? `${question.label} (${question.unit})` : question.label
}
