import { describe, expect, it } from 'vitest'
import { z } from 'zod'
import { isReservedKey, ownValue, safeText, unsafeTextProblem } from '../../shared/utils/schemas/safe-text'
import { questionSchema } from '../../shared/utils/schemas/questionnaire'
import { roundCreateSchema, villageCreateSchema } from '../../shared/utils/schemas/round'
import { inviteSchema, settingsSchema } from '../../shared/utils/schemas/team'
import { scenarioRequestSchema, publishRequestSchema } from '../../shared/utils/modelling/request'

describe('safe text', () => {
  it.each([
    ['a lone high surrogate', 'Kisima \uD800'],
    ['a lone low surrogate', '\uDC00 Kisima'],
    ['a reversed surrogate pair', '\uDC00\uD800'],
    ['NUL', 'Kisi\u0000ma'],
    ['a bell', 'Kisima\u0007'],
    ['an escape', '\u001B[31mred'],
    ['DEL', 'Kisima\u007F'],
    ['a non-character', 'Kisima\uFFFF'],
    ['a line feed in one line', 'two\nlines'],
    ['a tab in one line', 'a\tb'],
    ['a carriage return in one line', 'a\rb']
  ])('refuses %s in one line', (_what, text) => {
    expect(unsafeTextProblem(text)).toMatch(/./)
  })

  it.each([
    ['plain text', 'Kisima North'],
    ['accents', 'Mbẽrã'],
    ['an emoji (a valid surrogate pair)', 'Kisima 🌽'],
    ['markup-like text (escaped where shown, never refused)', '<img src=x onerror=alert(1)>']
  ])('keeps %s', (_what, text) => {
    expect(unsafeTextProblem(text)).toBeNull()
  })

  it('lets several lines hold tab, line feed and carriage return, but never NUL or other controls', () => {
    expect(unsafeTextProblem('line one\r\n\tline two', { multiline: true })).toBeNull()
    expect(unsafeTextProblem('line\u0000', { multiline: true })).toMatch(/NUL/)
    expect(unsafeTextProblem('line\u000B', { multiline: true })).toMatch(/control/)
  })

  it('checks after the schema trims, and keeps the schema chainable', () => {
    const name = safeText(z.string().trim().min(2).max(10))
    expect(name.parse('  Kisima\n')).toBe('Kisima')
    expect(name.safeParse('Ki\u0000ma').success).toBe(false)
    expect(name.optional().parse(undefined)).toBeUndefined()
  })

  it.each([
    ['a round name', () => roundCreateSchema.safeParse({ name: 'Long rains \uD800', technology: 'Storage bags', season: '2026' }), 'name'],
    ['a village name', () => villageCreateSchema.safeParse({ code: 'KS-1', name: 'Kis\u0000ima', district: 'Lowland', centreLat: 0, centreLon: 0 }), 'name'],
    ['a person name', () => inviteSchema.safeParse({ email: 'a@b.example', role: 'coordinator', name: 'Ada\uDFFF' }), 'name'],
    ['a funder name', () => settingsSchema.safeParse({ name: 'Org', defaultClusterVariable: 'village', minVisitsForFunders: 5, funderOrganisations: [{ name: 'Fund\u0001', emailDomain: 'fund.example' }] }), 'funderOrganisations.0.name'],
    ['a question label', () => questionSchema.safeParse({ key: 'note', label: 'Note\u0000', type: 'text' }), 'label'],
    ['an option label', () => questionSchema.safeParse({ key: 'soil', label: 'Soil', type: 'choice', options: [{ value: 'a', label: 'A\uD800' }, { value: 'b', label: 'B' }] }), 'options.0.label'],
    ['a scenario name', () => scenarioRequestSchema.safeParse({ name: 'All\u0000', covariate: 'farm_size', shift: 1 }), 'name'],
    ['a publication note', () => publishRequestSchema.safeParse({ note: 'For planning\u0000' }), 'note']
  ])('every schema with free text refuses broken text: %s', (_what, parse, path) => {
    const result = parse()
    expect(result.success).toBe(false)
    expect(result.error!.issues.map(i => i.path.join('.'))).toContain(path)
  })
})

describe('reserved keys', () => {
  it.each(['constructor', 'prototype', 'then', 'tostring', 'valueof', 'hasownproperty'])('refuses the question key %s', (key) => {
    expect(isReservedKey(key)).toBe(true)
    const result = questionSchema.safeParse({ key, label: 'A question', type: 'yesno' })
    expect(result.success).toBe(false)
    expect(result.error!.issues[0]!.message).toMatch(/reserved/)
  })

  it('keeps ordinary keys', () => {
    expect(isReservedKey('farm_size_ha')).toBe(false)
    expect(questionSchema.safeParse({ key: 'farm_size_ha', label: 'Farm size', type: 'number' }).success).toBe(true)
  })

  it('reads answers from own keys only', () => {
    expect(ownValue({}, 'constructor')).toBeUndefined()
    expect(ownValue({ constructor: 3 } as Record<string, number>, 'constructor')).toBe(3)
    expect(ownValue(JSON.parse('{"__proto__": 1}'), '__proto__')).toBe(1)
    expect(ownValue(null, 'a')).toBeUndefined()
  })
})
