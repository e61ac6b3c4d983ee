import { describe, expect, it } from 'vitest'
import { failedChecks } from '../../shared/utils/answer-checks'
import { conditionText } from '../../shared/utils/asking'
import { fieldErrorsOf } from '../../shared/utils/zod-errors'
import { type QuestionInput, outcomeQuestion, questionnaireDefinitionSchema } from '../../shared/utils/schemas/questionnaire'
import { answersSchemaFor } from '../../shared/utils/schemas/visit'
import { localiseDefinition, missingTranslations, prunedCheckMessages, prunedTranslations, shownLanguageCode } from '../../shared/utils/translation'
import { demoChecks, demoQuestions } from '../../server/db/demo/field-demo'
import { withDemoLanguages } from '../../server/db/demo/demo-languages'
import { demoPlotsGroup } from '../../server/db/demo/plots-demo'

// An invented questionnaire in English and an invented language, "Tolani" (code qaa, ISO 639's private-use range).
const questions: QuestionInput[] = [
  { ...outcomeQuestion('Ombara Gold sorghum seed'), help: 'Yes if sown this season.' },
  { key: 'farm_size_ha', label: 'Farm size', type: 'number', unit: 'ha', min: 0, max: 100, required: true },
  { key: 'area_ha', label: 'Area sown', type: 'number', unit: 'ha', min: 0, max: 100, askWhen: { join: 'all', tests: [{ question: 'adopted', test: 'equals', value: true }] } },
  { key: 'soil', label: 'Main soil', type: 'choice', options: [{ value: 'sandy', label: 'Sandy' }, { value: 'clay', label: 'Clay' }] },
  { key: 'reason', label: 'Why not?', type: 'choice', options: [{ value: 'price', label: 'Too dear' }, { value: 'none', label: 'No seed' }], askWhen: { join: 'all', tests: [{ question: 'soil', test: 'equals', value: 'clay' }] } }
]
const languages = [{ code: 'en', name: 'English' }, { code: 'qaa', name: 'Tolani' }]
const translations = {
  qaa: {
    adopted: { label: 'Mbeno Ombara sorilo?', help: 'Eya ko sorila.' },
    farm_size_ha: { label: 'Wukali ya mbeno', unit: 'hk' },
    area_ha: { label: 'Wukali sorila', unit: 'hk' },
    soil: { label: 'Tandu', options: { sandy: 'Tandu sawi', clay: 'Tandu loma' } },
    reason: { label: 'Kwa nini?', options: { price: 'Mali', none: 'Hapu mbegu' } }
  }
}
const checks = [{ question: 'area_ha', test: 'at_most' as const, against: { question: 'farm_size_ha' }, message: 'The area sown cannot pass the farm size.', messages: { qaa: 'Wukali sorila kama wukali ya mbeno.' } }]
const complete = { questions, checks, languages, translations }
const parse = (d: object) => {
  const r = questionnaireDefinitionSchema.safeParse(d)
  return r.success ? { ok: r.data, errors: {} } : { ok: null, errors: fieldErrorsOf(r.error) }
}

describe('localiseDefinition', () => {
  const definition = parse(complete).ok!

  it('replaces every text, keeps keys, codes, conditions and bounds', () => {
    const t = localiseDefinition(definition, 'qaa')
    expect(t.questions.map(q => q.label)).toEqual(['Mbeno Ombara sorilo?', 'Wukali ya mbeno', 'Wukali sorila', 'Tandu', 'Kwa nini?'])
    expect(t.questions[0]!.help).toBe('Eya ko sorila.')
    expect(t.questions.map(q => 'unit' in q ? q.unit : null)).toEqual([null, 'hk', 'hk', null, null])
    const soil = t.questions[3]!
    expect(soil.type === 'choice' && soil.options).toEqual([{ value: 'sandy', label: 'Tandu sawi' }, { value: 'clay', label: 'Tandu loma' }])
    expect(t.checks![0]!.message).toBe('Wukali sorila kama wukali ya mbeno.')
    expect(t.questions.map(q => q.key)).toEqual(definition.questions.map(q => q.key))
    expect(t.questions[2]!.askWhen).toEqual(definition.questions[2]!.askWhen)
    expect(t.questions[1]).toMatchObject({ min: 0, max: 100, required: true })
    // The original is untouched.
    expect(definition.questions[0]!.label).toContain('Ombara Gold')
  })

  it('gives the definition itself for the main language, an undeclared code or no languages', () => {
    expect(localiseDefinition(definition, 'en')).toBe(definition)
    expect(localiseDefinition(definition, 'fr')).toBe(definition)
    expect(localiseDefinition(definition, null)).toBe(definition)
    const older = parse({ questions }).ok!
    expect(localiseDefinition(older, 'qaa')).toBe(older)
  })

  it('feeds the same checks, schema and condition read-outs in the chosen language, answers still codes', () => {
    const t = localiseDefinition(definition, 'qaa')
    const answers = { adopted: true, farm_size_ha: 2, area_ha: 3, soil: 'clay', reason: 'price' }
    expect(failedChecks(t.questions, t.checks, answers).map(f => f.message)).toEqual(['Wukali sorila kama wukali ya mbeno.'])
    const r = answersSchemaFor(t.questions, t.checks).safeParse(answers)
    expect(r.success).toBe(false)
    expect(fieldErrorsOf(r.error!)['area_ha']).toBe('Wukali sorila kama wukali ya mbeno.')
    // The same codes pass the main language's schema and the localised one alike.
    const fine = { adopted: true, farm_size_ha: 2, area_ha: 1, soil: 'clay', reason: 'none' }
    expect(answersSchemaFor(t.questions, t.checks).safeParse(fine).success).toBe(true)
    expect(answersSchemaFor(definition.questions, definition.checks).safeParse(fine).success).toBe(true)
    expect(conditionText(t.questions[4]!.askWhen!, t.questions)).toBe('Tandu is Tandu loma')
  })

  it('translates groups by their unique key, and tolerates their absence', () => {
    const withGroups = {
      ...definition,
      groups: [{ key: 'plots', label: 'Plots', help: 'One per field', questions: [{ key: 'plot_area', label: 'Plot area', unit: 'ha' }, { key: 'plot_soil', label: 'Soil', options: [{ value: 'red', label: 'Red' }] }] }],
      translations: { qaa: { ...translations.qaa, plots: { label: 'Mashamba', help: 'Moja kwa kila' }, plot_area: { label: 'Wukali', unit: 'hk' }, plot_soil: { label: 'Tandu', options: { red: 'Nyekundu' } } } }
    }
    const t = localiseDefinition(withGroups, 'qaa')
    expect(t.groups![0]).toEqual({ key: 'plots', label: 'Mashamba', help: 'Moja kwa kila', questions: [{ key: 'plot_area', label: 'Wukali', unit: 'hk' }, { key: 'plot_soil', label: 'Tandu', options: [{ value: 'red', label: 'Nyekundu' }] }] })
    expect(missingTranslations(withGroups)[0]!.missing).toEqual([])
    const { plot_soil: _gone, ...without } = withGroups.translations.qaa
    expect(missingTranslations({ ...withGroups, translations: { qaa: without } })[0]!.missing.map(m => m.path.join('.'))).toEqual(['translations.qaa.plot_soil.label', 'translations.qaa.plot_soil.options.red'])
    expect('groups' in localiseDefinition(definition, 'qaa')).toBe(false)
  })

  it('falls back to the main text for a text with no translation (an older or partial copy)', () => {
    const partial = { ...definition, translations: { qaa: { soil: { label: 'Tandu' } } } }
    const t = localiseDefinition(partial, 'qaa')
    expect(t.questions[1]!.label).toBe('Farm size')
    const soil = t.questions[3]!
    expect(soil.type === 'choice' && soil.options.map(o => o.label)).toEqual(['Sandy', 'Clay'])
  })

  it('picks the shown language: the one asked for if declared, else the main one', () => {
    expect(shownLanguageCode(definition, 'qaa')).toBe('qaa')
    expect(shownLanguageCode(definition, 'fr')).toBe('en')
    expect(shownLanguageCode({}, 'qaa')).toBeNull()
  })
})

describe('missing translations', () => {
  it('lists each missing text per language, with what it is and the main text', () => {
    const { farm_size_ha: _f, soil, ...rest } = translations.qaa
    const d = { questions, checks: [{ ...checks[0]!, messages: {} }], languages: [...languages, { code: 'fr', name: 'Français' }], translations: { qaa: { ...rest, soil: { label: soil.label, options: { sandy: 'Tandu sawi' } } } } }
    const [qaa, fr] = missingTranslations(d)
    expect(qaa!.language.name).toBe('Tolani')
    expect(qaa!.missing.map(m => [m.path.join('.'), m.what, m.text])).toEqual([
      ['translations.qaa.farm_size_ha.label', 'label', 'Farm size'],
      ['translations.qaa.farm_size_ha.unit', 'unit', 'ha'],
      ['translations.qaa.soil.options.clay', 'option', 'Clay'],
      ['checks.0.messages.qaa', 'message', 'The area sown cannot pass the farm size.']
    ])
    // Nothing typed for French: every text (5 labels, 1 guidance, 2 units, 4 options, 1 message).
    expect(fr!.missing).toHaveLength(13)
  })

  it('counts a blank text as missing', () => {
    const d = { questions, languages, translations: { qaa: { ...translations.qaa, soil: { label: '  ', options: { sandy: 'x', clay: '' } } } } }
    expect(missingTranslations(d)[0]!.missing.map(m => m.path.join('.'))).toEqual(['translations.qaa.soil.label', 'translations.qaa.soil.options.clay'])
  })
})

describe('the definition schema refuses', () => {
  it('a missing translation, with a clear message at the text\'s place', () => {
    const { errors } = parse({ ...complete, translations: { qaa: { ...translations.qaa, farm_size_ha: { label: 'Wukali ya mbeno' } } } })
    expect(errors).toEqual({ 'translations.qaa.farm_size_ha.unit': 'Tolani (qaa): no unit for "Farm size" ("ha")' })
    const noMessage = parse({ ...complete, checks: [{ ...checks[0]!, messages: undefined }] }).errors
    expect(noMessage).toEqual({ 'checks.0.messages.qaa': 'Tolani (qaa): no message for check 1 ("The area sown cannot pass the farm size.")' })
    const { adopted: _a, ...withoutOutcome } = translations.qaa
    const noLabel = parse({ ...complete, translations: { qaa: withoutOutcome } }).errors
    expect(noLabel['translations.qaa.adopted.help']).toBe('Tolani (qaa): no guidance for "Has this farm adopted Ombara Gold sorghum seed this season?" ("Yes if sown this season.")')
    expect(noLabel['translations.qaa.adopted.label']).toMatch(/^Tolani \(qaa\): no text for "Has this farm adopted/)
  })

  it('texts for an undeclared or the main language, or for something that does not exist', () => {
    expect(parse({ ...complete, translations: { ...translations, fr: { soil: { label: 'Sol' } } } }).errors['translations.fr']).toBe('The language "fr" is not declared for this questionnaire')
    expect(parse({ ...complete, translations: { ...translations, en: { soil: { label: 'Soil' } } } }).errors['translations.en']).toMatch(/English is the main language/)
    expect(parse({ questions, translations }).errors['translations.qaa']).toBe('Declare the questionnaire\'s languages before adding translations')
    const extra = { ...translations.qaa, gone: { label: 'X' }, soil: { label: 'Tandu', options: { sandy: 'a', clay: 'b', loam: 'c' } }, area_ha: { label: 'W', unit: 'hk', help: 'H' } }
    expect(parse({ ...complete, translations: { qaa: extra } }).errors).toEqual({
      'translations.qaa.gone': 'There is no question or group "gone" to translate',
      'translations.qaa.soil.options.loam': '"Main soil" has no option "loam" to translate',
      'translations.qaa.area_ha.help': '"Area sown" has no guidance in the main language to translate'
    })
    expect(parse({ ...complete, checks: [{ ...checks[0]!, messages: { fr: 'Trop grand' } }] }).errors['checks.0.messages.fr']).toBe('The language "fr" is not declared for this questionnaire')
  })

  it('bad language codes and names, a code twice, unsafe text, unknown fields and prototype keys', () => {
    expect(parse({ ...complete, languages: [languages[0], { code: 'Swahili', name: 'Kiswahili' }] }).errors['languages.1.code']).toMatch(/language tag/)
    expect(parse({ ...complete, languages: [languages[0], { code: 'qaa', name: '' }] }).errors['languages.1.name']).toBe('Name the language as enumerators know it')
    expect(parse({ ...complete, languages: [...languages, { code: 'qaa', name: 'Again' }] }).errors['languages.2.code']).toBe('The language code "qaa" is declared twice')
    expect(parse({ ...complete, languages: [] }).errors.languages).toBe('Declare at least the main language')
    expect(parse({ ...complete, translations: { qaa: { ...translations.qaa, soil: { label: 'Tan\u0000du', options: translations.qaa.soil.options } } } }).errors['translations.qaa.soil.label']).toMatch(/NUL/)
    expect(parse({ ...complete, translations: { qaa: { ...translations.qaa, soil: { ...translations.qaa.soil, colour: 'x' } } } }).errors['translations.qaa.soil']).toMatch(/Only label, help, unit and options/)
    const polluted = JSON.parse('{"qaa":{"__proto__":{"label":"x"}}}')
    expect(parse({ ...complete, translations: polluted }).ok).toBeNull()
  })

  it('accepts the complete definition, and a definition without languages as before', () => {
    expect(parse(complete).ok).not.toBeNull()
    expect(parse({ questions, checks: [{ ...checks[0]!, messages: undefined }] }).ok).not.toBeNull()
    expect(parse({ questions, languages: [languages[0]] }).ok).not.toBeNull()
  })
})

describe('pruning what the builder sends', () => {
  it('drops texts of removed questions, options, languages, guidance and blanks', () => {
    const typed = { ...translations, fr: { soil: { label: 'Sol' } }, qaa: { ...translations.qaa, gone: { label: 'X' }, soil: { label: 'Tandu', options: { sandy: ' Tandu sawi ', clay: '', loam: 'Old' } }, area_ha: { label: 'W', unit: ' ', help: 'H' } } }
    const pruned = prunedTranslations({ questions, languages, translations: typed })
    expect(Object.keys(pruned)).toEqual(['qaa'])
    expect(pruned.qaa!.gone).toBeUndefined()
    expect(pruned.qaa!.soil).toEqual({ label: 'Tandu', options: { sandy: 'Tandu sawi' } })
    expect(pruned.qaa!.area_ha).toEqual({ label: 'W' })
    expect(prunedCheckMessages({ qaa: 'Ok message', fr: 'Trop', en: 'Main' }, languages)).toEqual({ qaa: 'Ok message' })
    expect(prunedCheckMessages({ qaa: '  ' }, languages)).toBeUndefined()
  })
})

describe('the demo round', () => {
  it('is complete in Kiswahili, its plots and its check message too', () => {
    const demo = parse(withDemoLanguages({ questions: demoQuestions(), checks: demoChecks(), groups: [demoPlotsGroup()] }))
    expect(demo.errors).toEqual({})
    const sw = localiseDefinition(demo.ok!, 'sw')
    expect(sw.questions.find(q => q.key === 'female_head')!.label).toBe('Je, kaya inaongozwa na mwanamke?')
    expect(sw.checks![0]!.message).toMatch(/^Miaka ya shule/)
    const plots = sw.groups![0]!
    expect(plots.label).toBe('Vipande vya shamba')
    expect(plots.questions.find(q => q.key === 'plot_soil')).toMatchObject({ label: 'Aina kuu ya udongo wa kipande', options: [{ value: 'sandy', label: 'Udongo wa kichanga' }, { value: 'loam', label: 'Udongo tifutifu' }, { value: 'clay', label: 'Udongo wa mfinyanzi' }] })
  })
})
