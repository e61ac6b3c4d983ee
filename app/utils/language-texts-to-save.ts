import type { AnswerCheckInput } from '#shared/utils/schemas/checks'
import type { Language, Translations } from '#shared/utils/schemas/languages'
import type { QuestionInput } from '#shared/utils/schemas/questionnaire'

/**
 * What the builder sends of its checks and languages: texts of removed questions, options and languages dropped, blanks
 * dropped (so a blank is reported as missing, not as a bad text), and no language keys at all for one language.
 */
export function languageTextsToSave(questions: QuestionInput[], checks: AnswerCheckInput[], languages: Language[], translations: Translations) {
  const declared = languages.length > 1 ? languages : []
  const kept = checks.map(({ messages, ...c }) => {
    const pruned = prunedCheckMessages(messages, declared)
    return pruned ? { ...c, messages: pruned } : c
  })
  if (!declared.length) return { checks: kept }
  return { checks: kept, languages: declared, translations: prunedTranslations({ questions, checks, languages: declared, translations }) }
}
