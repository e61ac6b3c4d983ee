import { describe, expect, it } from 'vitest'
import { CsvFileError, checkRows, parseCsv, rejectedRowsCsv, visitDayOf } from '../../shared/utils/imports/csv-rows'
import { importRequestSchema } from '../../shared/utils/schemas/csv-import'
import { outcomeQuestion, questionnaireDefinitionSchema } from '../../shared/utils/schemas/questionnaire'

const { questions } = questionnaireDefinitionSchema.parse({
  questions: [
    outcomeQuestion('improved storage bags'),
    { key: 'farm_size_ha', label: 'Farm size', type: 'number', min: 0, max: 50, required: true },
    { key: 'soil', label: 'Soil', type: 'choice', options: [{ value: 'sandy', label: 'Sandy' }, { value: 'clay', label: 'Heavy clay' }] }
  ]
})
const request = importRequestSchema.parse({
  csv: '',
  mapping: { farmCode: 'farm', villageCode: 'village', questions: { adopted: 'adopted', farm_size_ha: 'size', soil: 'soil' } }
})

describe('parseCsv', () => {
  it('keeps row numbers as a spreadsheet shows them, skipping blank lines, and names a nameless column', () => {
    const parsed = parseCsv('\uFEFF"",farm,village\n1,F1,V1\n\n2,F2,V2\n')
    expect(parsed.columns).toEqual(['column 1', 'farm', 'village'])
    expect(parsed.records.map(r => r.row)).toEqual([2, 4])
  })

  it('refuses an empty file, a header only, one column, a repeated column and unreadable characters', () => {
    expect(() => parseCsv('  \n')).toThrow(CsvFileError)
    expect(() => parseCsv('a,b\n')).toThrow(/no data rows/)
    expect(() => parseCsv('a:b:c\n1:2:3\n')).toThrow(/separated by colons/)
    expect(() => parseCsv('abc\n1\n')).toThrow(/Only one column was found\. /)
    expect(() => parseCsv('a,a\n1,2\n')).toThrow(/"a" twice/)
    expect(() => parseCsv('a,b\n\uFFFD,2\n')).toThrow(/not in UTF-8/)
  })
})

describe('checkRows', () => {
  it('types the cells, matches choice labels and village codes case-insensitively, and reports per field', () => {
    const parsed = parseCsv('farm,village,adopted,size,soil\nF1,v1,Yes,2.5,heavy clay\nF 2,V9,no,,Loam\n')
    const { rows, mappingProblems } = checkRows(parsed, questions, request, ['V1', 'V2'])
    expect(mappingProblems).toEqual([])
    expect(rows[0]).toMatchObject({ row: 2, farmCode: 'F1', villageCode: 'V1', answers: { adopted: true, farm_size_ha: 2.5, soil: 'clay' }, problems: [] })
    expect(rows[1]!.problems.map(p => [p.field, p.message])).toEqual([
      ['farmCode', 'Letters, digits and / _ . - only'],
      ['villageCode', '"V9" is not a village of this round (V1, V2)'],
      ['farm_size_ha', 'This answer is required'],
      ['soil', 'Choose one of the listed answers (found "Loam")']
    ])
    expect(rejectedRowsCsv(parsed.columns, rows).split('\n')).toHaveLength(2)
  })

  it('reads a decimal comma in semicolon files only, where a comma cannot separate columns', () => {
    const semi = checkRows(parseCsv('farm;village;adopted;size;soil\nF1;V1;yes;2,5;clay\n'), questions, request, ['V1'])
    expect(semi.rows[0]!.answers.farm_size_ha).toBe(2.5)
    const comma = checkRows(parseCsv('farm,village,adopted,size,soil\nF1,V1,yes,"2,5",clay\n'), questions, request, ['V1'])
    expect(comma.rows[0]!.problems.map(p => p.field)).toEqual(['farm_size_ha'])
  })

  it('names questions by their labels in the rejected rows file', () => {
    const parsed = parseCsv('farm,village,adopted,size,soil\nF1,V1,maybe,2,clay\n')
    const { rows } = checkRows(parsed, questions, request, ['V1'])
    const label = questions.find(q => q.key === 'adopted')!.label
    expect(rejectedRowsCsv(parsed.columns, rows, questions)).toContain(`${label} — Choose yes or no`)
  })
})

describe('visitDayOf', () => {
  it.each([
    ['2026-03-14', { day: '2026-03-14' }],
    ['2026-02-30', { problem: expect.stringContaining('YYYY-MM-DD') }],
    ['14/03/2026', { problem: expect.stringContaining('YYYY-MM-DD') }],
    ['2027-01-01', { problem: 'The visit date 2027-01-01 is in the future' }]
  ])('%s', (raw, expected) => {
    expect(visitDayOf(raw, '2026-12-01')).toEqual(expected)
  })
})

describe('line endings', () => {
  it('reads a CRLF header with LF rows (and a lone CR) as separate rows', () => {
    const parsed = parseCsv('farm,village,adopted\r\nF-1,KS-1,yes\nF-2,KS-1,no\rF-3,KS-2,yes\n')
    expect(parsed.columns).toEqual(['farm', 'village', 'adopted'])
    expect(parsed.records.map(r => r.values)).toEqual([['F-1', 'KS-1', 'yes'], ['F-2', 'KS-1', 'no'], ['F-3', 'KS-2', 'yes']])
    expect(parsed.records.map(r => r.row)).toEqual([2, 3, 4])
  })
})
