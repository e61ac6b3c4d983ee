import type { Question } from '#shared/utils/schemas/questionnaire'

/** An answer as a person reads it: yes/no in words, numbers with their unit, a choice by its label. */
export function answerText(question: Question | undefined, value: unknown): string {
  if (value === undefined || value === null || value === '' || (Array.isArray(value) && value.length === 0)) return '—'
  if (Array.isArray(value)) {
    const options = question && 'options' in question ? question.options : []
    return value.map(v => options.find(o => o.value === v)?.label ?? String(v)).join(', ')
  }
  if (value === true) return 'Yes'
  if (value === false) return 'No'
  if (!question) return String(value)
  if ((question.type === 'number' || question.type === 'whole') && question.unit) return `${value} ${question.unit}`
  if (question.type === 'choice') return question.options.find(o => o.value === value)?.label ?? String(value)
  return String(value)
}
