import { z } from 'zod'
import { isReservedKey, safeText } from './safe-text'

// The languages a questionnaire is asked in. The first language is the main one: its texts are the questions' own
// `label`, `help`, `unit`, option labels and check messages. Every other language keeps its texts in
// `translations[code][questionOrGroupKey]`, and a check's message in `check.messages[code]`. Answers are stored as the
// same codes whatever the language, so exports and models never see a translated word.

/** A language tag as BCP 47 writes it (ISO 639 language, optional subtags): `sw`, `fr`, `pt-BR`, `qaa` (private use). */
export const languageCodeSchema = z.string().trim()
  .regex(/^[a-z]{2,3}(-[A-Za-z0-9]{2,8}){0,2}$/, 'Use a language tag such as sw, fr or pt-BR (2–3 lower-case letters, optional -subtags)')
  .refine(c => !isReservedKey(c), 'This code is reserved; choose another')

export const languageSchema = z.object({
  code: languageCodeSchema,
  name: safeText(z.string().trim().min(1, 'Name the language as enumerators know it').max(40, 'At most 40 characters'))
})
export type Language = z.infer<typeof languageSchema>

const questionKeyPattern = /^[a-z][a-z0-9_]{0,39}$/
const optionCodePattern = /^[a-z0-9_]{1,40}$/

/** One question's (or group's) texts in one language; only the texts the main language has are given. */
export const translatedTextsSchema = z.strictObject({
  label: safeText(z.string().trim().min(1, 'Write the translated text').max(200, 'At most 200 characters')),
  help: safeText(z.string().trim().min(1, 'Write the translated guidance').max(500, 'At most 500 characters'), { multiline: true }).optional(),
  unit: safeText(z.string().trim().min(1, 'Write the translated unit').max(20, 'At most 20 characters')).optional(),
  options: z.record(
    z.string().regex(optionCodePattern, 'Not an option code').refine(v => !isReservedKey(v), 'This code is reserved'),
    safeText(z.string().trim().min(1, 'Write the translated option').max(120, 'At most 120 characters'))
  ).optional()
}, { error: issue => issue.code === 'unrecognized_keys' ? `Only label, help, unit and options can be translated (not ${issue.keys.join(', ')})` : 'Give the texts as an object' })
export type TranslatedTexts = z.infer<typeof translatedTextsSchema>

export const translationsSchema = z.record(
  languageCodeSchema,
  z.record(
    z.string().regex(questionKeyPattern, 'Not a question key').refine(k => !isReservedKey(k), 'This key is reserved'),
    translatedTextsSchema
  )
)
export type Translations = z.infer<typeof translationsSchema>

/** A check's message in each language other than the main one. */
export const checkMessagesSchema = z.record(
  languageCodeSchema,
  safeText(z.string().trim().min(3, 'Write the message in this language').max(200, 'At most 200 characters'))
)

export const languagesSchema = z.array(languageSchema)
  .min(1, 'Declare at least the main language')
  .max(8, 'At most 8 languages')
  .superRefine((list, ctx) => {
    const seen = new Set<string>()
    list.forEach((l, i) => {
      if (seen.has(l.code)) ctx.addIssue({ code: 'custom', path: [i, 'code'], message: `The language code "${l.code}" is declared twice` })
      seen.add(l.code)
    })
  })
