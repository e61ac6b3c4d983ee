import type { DefinitionProblem } from './asking'
import type { Language, Translations } from './schemas/languages'
import { ownValue } from './schemas/safe-text'

// A questionnaire in several languages: the pure functions the builder, the schema and the tablet share.
// The main language's texts are the definition's own fields; other languages' texts replace them in a copy of the
// same shape (`localiseDefinition`), so everything that renders a definition renders any language unchanged.

interface TextOption { value: string, label: string }
/** The texts of a question as this module reads them (any kind of question has this shape or a part of it). */
export interface LocalisableQuestion { key: string, label: string, help?: string, unit?: string, options?: readonly TextOption[] }
export interface LocalisableGroup { key: string, label: string, help?: string, questions: readonly LocalisableQuestion[] }
export interface LocalisableCheck { message: string, messages?: Record<string, string> }
export interface LocalisableDefinition {
  questions: readonly LocalisableQuestion[]
  groups?: readonly LocalisableGroup[]
  checks?: readonly LocalisableCheck[]
  languages?: readonly Language[]
  translations?: Translations
}

/** The main language (the first declared), or null for a questionnaire in one language that declares none. */
export function mainLanguageOf(definition: Pick<LocalisableDefinition, 'languages'>): Language | null {
  return definition.languages?.[0] ?? null
}

/** The language to show: the one asked for if the questionnaire declares it, else the main one (null: none declared). */
export function shownLanguageCode(definition: Pick<LocalisableDefinition, 'languages'>, wanted: string | null | undefined): string | null {
  const languages = definition.languages ?? []
  return languages.find(l => l.code === wanted)?.code ?? languages[0]?.code ?? null
}

function textsOf(translations: Translations | undefined, code: string, key: string) {
  const perLanguage = translations ? ownValue(translations, code) as Translations[string] | undefined : undefined
  return perLanguage ? ownValue(perLanguage, key) as Translations[string][string] | undefined : undefined
}

function localiseQuestion<Q extends LocalisableQuestion>(q: Q, translations: Translations | undefined, code: string): Q {
  const t = textsOf(translations, code, q.key)
  if (!t) return q
  const out: Q = { ...q, label: t.label || q.label }
  if (q.help && t.help) out.help = t.help
  if (q.unit && t.unit) out.unit = t.unit
  if (q.options) out.options = q.options.map(o => ({ ...o, label: (t.options && ownValue(t.options, o.value) as string | undefined) || o.label }))
  return out
}

/**
 * The definition with every text in language `code`: question and group labels, help, units, option labels and check
 * messages. Keys, option codes, conditions and bounds are untouched, so answers keep their stable codes. A text with
 * no translation keeps the main language's text. The main language, an undeclared code or a definition without
 * languages gives the definition itself (the same object).
 */
export function localiseDefinition<D extends LocalisableDefinition>(definition: D, code: string | null | undefined): D {
  const main = mainLanguageOf(definition)
  if (!main || !code || code === main.code || !definition.languages!.some(l => l.code === code)) return definition
  const { translations } = definition
  const out: D = { ...definition, questions: definition.questions.map(q => localiseQuestion(q, translations, code)) }
  if (definition.groups) {
    out.groups = definition.groups.map((g) => {
      const t = textsOf(translations, code, g.key)
      return {
        ...g,
        label: t?.label || g.label,
        ...(g.help ? { help: t?.help || g.help } : {}),
        questions: g.questions.map(q => localiseQuestion(q, translations, code))
      }
    })
  }
  if (definition.checks) {
    out.checks = definition.checks.map(c => ({ ...c, message: (c.messages && ownValue(c.messages, code) as string | undefined) || c.message }))
  }
  return out
}

export type MissingWhat = 'label' | 'help' | 'unit' | 'option' | 'message'
export interface MissingText {
  /** Where the text belongs in the definition (also the field-error key of the builder's input). */
  path: Array<string | number>
  what: MissingWhat
  /** The main language's text to translate. */
  text: string
  /** The question, group or check it belongs to, in the main language. */
  of: string
}
export interface MissingTranslations { language: Language, missing: MissingText[] }

const blank = (s: unknown) => typeof s !== 'string' || s.trim() === ''

function missingOfItem(item: LocalisableQuestion | LocalisableGroup, translations: Translations | undefined, code: string): MissingText[] {
  const t = textsOf(translations, code, item.key)
  const base = ['translations', code, item.key]
  const of = item.label || item.key
  const out: MissingText[] = []
  if (blank(t?.label)) out.push({ path: [...base, 'label'], what: 'label', text: item.label, of })
  if (!blank(item.help) && blank(t?.help)) out.push({ path: [...base, 'help'], what: 'help', text: item.help!, of })
  if ('unit' in item && !blank(item.unit) && blank(t?.unit)) out.push({ path: [...base, 'unit'], what: 'unit', text: item.unit!, of })
  for (const o of ('options' in item ? item.options : undefined) ?? []) {
    if (blank(t?.options && ownValue(t.options, o.value))) out.push({ path: [...base, 'options', o.value], what: 'option', text: o.label, of })
  }
  return out
}

/** Every text of the main language that a declared language lacks, per language (languages with nothing missing too). */
export function missingTranslations(definition: LocalisableDefinition): MissingTranslations[] {
  const [, ...others] = definition.languages ?? []
  return others.map((language) => {
    const { code } = language
    const missing: MissingText[] = []
    for (const q of definition.questions) missing.push(...missingOfItem(q, definition.translations, code))
    for (const g of definition.groups ?? []) {
      missing.push(...missingOfItem(g, definition.translations, code))
      for (const q of g.questions) missing.push(...missingOfItem(q, definition.translations, code))
    }
    definition.checks?.forEach((c, i) => {
      if (blank(c.messages && ownValue(c.messages, code))) missing.push({ path: ['checks', i, 'messages', code], what: 'message', text: c.message, of: `check ${i + 1}` })
    })
    return { language, missing }
  })
}

export const MISSING_WORDS: Record<MissingWhat, string> = { label: 'text', help: 'guidance', unit: 'unit', option: 'option', message: 'check message' }

/** One line per missing text: `Kiswahili (sw): no unit for "Farm size" ("ha")`. */
export function missingTextMessage(language: Language, m: MissingText): string {
  const what = m.what === 'label' ? `no text for "${m.of}"` : m.what === 'message' ? `no message for ${m.of} ("${m.text}")` : `no ${MISSING_WORDS[m.what]} for "${m.of}" ("${m.text}")`
  return `${language.name} (${language.code}): ${what}`
}

/** Every key a translation may name: questions, groups and the questions inside groups. */
function itemsByKey(definition: LocalisableDefinition) {
  const items = new Map<string, LocalisableQuestion | LocalisableGroup>()
  for (const q of definition.questions) items.set(q.key, q)
  for (const g of definition.groups ?? []) {
    items.set(g.key, g)
    for (const q of g.questions) items.set(q.key, q)
  }
  return items
}

/**
 * Everything wrong with a definition's languages, checked on save: a missing translation (one problem per text, so
 * the builder marks each input), texts for an undeclared or the main language, for a question, option, guidance or
 * unit the main language does not have.
 */
export function translationProblems(definition: LocalisableDefinition): DefinitionProblem[] {
  const problems: DefinitionProblem[] = []
  const languages = definition.languages ?? []
  const main = languages[0]
  const others = new Set(languages.slice(1).map(l => l.code))
  const items = itemsByKey(definition)
  const undeclared = (code: string) => code === main?.code
    ? `${main.name} is the main language: its texts are the questions' own, not a translation`
    : languages.length ? `The language "${code}" is not declared for this questionnaire` : 'Declare the questionnaire\'s languages before adding translations'
  for (const [code, perKey] of Object.entries(definition.translations ?? {})) {
    if (!others.has(code)) {
      problems.push({ path: ['translations', code], message: undeclared(code) })
      continue
    }
    for (const [key, t] of Object.entries(perKey)) {
      const item = items.get(key)
      const path = ['translations', code, key]
      if (!item) {
        problems.push({ path, message: `There is no question or group "${key}" to translate` })
        continue
      }
      const name = item.label || key
      if (t.help !== undefined && blank(item.help)) problems.push({ path: [...path, 'help'], message: `"${name}" has no guidance in the main language to translate` })
      if (t.unit !== undefined && !('unit' in item && !blank(item.unit))) problems.push({ path: [...path, 'unit'], message: `"${name}" has no unit in the main language to translate` })
      const codes = new Set((('options' in item ? item.options : undefined) ?? []).map(o => o.value))
      for (const option of Object.keys(t.options ?? {})) {
        if (!codes.has(option)) problems.push({ path: [...path, 'options', option], message: `"${name}" has no option "${option}" to translate` })
      }
    }
  }
  definition.checks?.forEach((c, i) => {
    for (const code of Object.keys(c.messages ?? {})) {
      if (!others.has(code)) problems.push({ path: ['checks', i, 'messages', code], message: undeclared(code) })
    }
  })
  for (const { language, missing } of missingTranslations(definition)) {
    for (const m of missing) problems.push({ path: m.path, message: missingTextMessage(language, m) })
  }
  return problems
}

/**
 * Only the texts that still belong (declared languages other than the main one, keys and options that exist, guidance
 * and units the main language has, no blanks): what the builder sends after questions, options or languages changed.
 */
export function prunedTranslations(definition: LocalisableDefinition): Translations {
  const items = itemsByKey(definition)
  const out: Translations = {}
  for (const language of (definition.languages ?? []).slice(1)) {
    const perKey = definition.translations ? ownValue(definition.translations, language.code) as Translations[string] | undefined : undefined
    if (!perKey) continue
    const kept: Translations[string] = {}
    for (const [key, t] of Object.entries(perKey)) {
      const item = items.get(key)
      if (!item || !t) continue
      const entry: Translations[string][string] = { label: (t.label ?? '').trim() }
      if (!blank(item.help) && !blank(t.help)) entry.help = t.help!.trim()
      if ('unit' in item && !blank(item.unit) && !blank(t.unit)) entry.unit = t.unit!.trim()
      const options = Object.fromEntries((('options' in item ? item.options : undefined) ?? [])
        .map(o => [o.value, (t.options ? ownValue(t.options, o.value) as string | undefined : undefined)?.trim()])
        .filter(([, label]) => !blank(label)))
      if (Object.keys(options).length) entry.options = options
      // A label-less entry cannot be stored (the label is required): the missing list names it instead.
      if (entry.label) kept[key] = entry
    }
    if (Object.keys(kept).length) out[language.code] = kept
  }
  return out
}

/** A check's messages in the declared languages other than the main one, without blanks. */
export function prunedCheckMessages(messages: Record<string, string> | undefined, languages: readonly Language[] | undefined): Record<string, string> | undefined {
  const codes = new Set((languages ?? []).slice(1).map(l => l.code))
  const kept = Object.entries(messages ?? {}).filter(([code, text]) => codes.has(code) && !blank(text)).map(([code, text]) => [code, text.trim()])
  return kept.length ? Object.fromEntries(kept) : undefined
}
