import type { QuestionnaireVersionDto } from '#shared/utils/schemas/questionnaire'

// One localised copy per version and language, so the visit schema (memoised per version object) is built once each.
const copies = new WeakMap<QuestionnaireVersionDto, Map<string, QuestionnaireVersionDto>>()

/** The version with its texts in language `code` (the version itself for its main language or an unknown code). */
export function localisedVersion(version: QuestionnaireVersionDto, code: string | null | undefined): QuestionnaireVersionDto {
  const definition = localiseDefinition(version.definition, code)
  if (definition === version.definition) return version
  let perCode = copies.get(version)
  if (!perCode) copies.set(version, perCode = new Map())
  let copy = perCode.get(code!)
  if (!copy) perCode.set(code!, copy = { ...version, definition })
  return copy
}
