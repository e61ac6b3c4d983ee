import { OUTCOME_KEY, type QuestionnaireDefinition } from '#shared/utils/schemas/questionnaire'
import type { Language, Translations } from '#shared/utils/schemas/languages'

/** The language part of a questionnaire definition, as the builder sends it and as a version stores it. */
export interface LanguageTexts { languages?: Language[], translations?: Translations }

/** Only the keys given: a save without languages stores a definition without them, as before languages existed. */
export function languageTextsOf(body: LanguageTexts): LanguageTexts {
  return {
    ...(body.languages?.length ? { languages: body.languages } : {}),
    ...(body.languages?.length && body.translations && Object.keys(body.translations).length ? { translations: body.translations } : {})
  }
}

/**
 * The languages and translations a new round copies from an earlier one. The adoption question is asked about the new
 * round's technology, so its old translation would be wrong: it is left out and the builder lists it as missing.
 */
export function copiedLanguageTexts(earlier: QuestionnaireDefinition): LanguageTexts {
  if (!earlier.languages?.length) return {}
  const translations = Object.fromEntries(Object.entries(earlier.translations ?? {})
    .map(([code, perKey]) => [code, Object.fromEntries(Object.entries(perKey).filter(([key]) => key !== OUTCOME_KEY))]))
  return languageTextsOf({ languages: earlier.languages, translations })
}
