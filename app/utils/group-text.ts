import type { Question, QuestionGroup } from '#shared/utils/schemas/questionnaire'
import { rowsOf } from '#shared/utils/schemas/groups'
import { answerText } from './answer-text'

/** How one row of a group is named on screen: "Plots, row 2". */
export function rowName(group: Pick<QuestionGroup, 'label'>, index: number): string {
  return `${group.label}, row ${index + 1}`
}

/**
 * A correction of a group's rows in words, one line per changed answer ("Plots, row 1 · Plot size: 1.5 ha → 1.25 ha"),
 * rows matched by their id; a row added or removed is one line.
 */
export function groupChangeLines(group: QuestionGroup, before: unknown, after: unknown): string[] {
  const old = rowsOf({ v: before }, 'v')
  const now = rowsOf({ v: after }, 'v')
  const lines: string[] = []
  const questionOf = (key: string): Question | undefined => group.questions.find(q => q.key === key)
  now.forEach((row, i) => {
    const was = old.find(r => r.row === row.row)
    if (!was) {
      lines.push(`${rowName(group, i)} added`)
      return
    }
    for (const q of group.questions) {
      if (JSON.stringify(was[q.key] ?? null) !== JSON.stringify(row[q.key] ?? null)) {
        lines.push(`${rowName(group, i)} · ${q.label}: ${answerText(questionOf(q.key), was[q.key])} → ${answerText(questionOf(q.key), row[q.key])}`)
      }
    }
  })
  old.forEach((row, i) => {
    if (!now.some(r => r.row === row.row)) lines.push(`${rowName(group, i)} removed (as it was before)`)
  })
  return lines
}
