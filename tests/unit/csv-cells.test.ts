import { describe, expect, it } from 'vitest'
import { neutraliseCsvCell } from '../../shared/utils/csv-cells'
import { parseCsv, rejectedRowsCsv } from '../../shared/utils/imports/csv-rows'

describe('CSV cells', () => {
  it.each([
    ['=HYPERLINK("http://x.example","click")', '\'=HYPERLINK("http://x.example","click")'],
    ['+SUM(A1:A2)', '\'+SUM(A1:A2)'],
    ['-2+3+cmd|\' /C calc\'!A0', '\'-2+3+cmd|\' /C calc\'!A0'],
    ['@SUM(1)', '\'@SUM(1)'],
    ['\t=1+1', '\'\t=1+1'],
    ['\r=1+1', '\'\r=1+1'],
    ['-', '\'-'],
    ['- a dash list', '\'- a dash list']
  ])('neutralises the text cell %j', (cell, expected) => {
    expect(neutraliseCsvCell(cell)).toBe(expected)
  })

  it.each([
    ['a negative number', -0.25, '-0.25'],
    ['a number written as text', '-2.5', '-2.5'],
    ['a signed exponent', '+1e-4', '+1e-4'],
    ['plain text', 'Kisima', 'Kisima'],
    ['a formula sign later in the text', 'a=b', 'a=b'],
    ['nothing', null, ''],
    ['undefined', undefined, ''],
    ['a boolean', true, 'true']
  ])('keeps %s as it is', (_what, value, expected) => {
    expect(neutraliseCsvCell(value)).toBe(expected)
  })

  it('the rejected-rows CSV of an import carries no live formula, in its cells or its header', () => {
    const parsed = parseCsv('farm,village,=cmd\n=HYPERLINK("x"),KS-1,-3\n')
    const rows = parsed.records.map(r => ({ row: r.row, values: r.values, farmCode: '', villageCode: '', answers: {}, problems: [{ row: r.row, field: 'farmCode', column: 'farm', message: 'bad' }] }))
    const csv = rejectedRowsCsv(parsed.columns, rows)
    expect(csv.split('\n')[0]).toBe('farm,village,\'=cmd,reason')
    expect(csv.split('\n')[1]).toBe('"\'=HYPERLINK(""x"")",KS-1,-3,Farm code — bad')
  })
})
