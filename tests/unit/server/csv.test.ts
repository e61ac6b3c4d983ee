import { strFromU8, unzipSync } from 'fflate'
import { describe, expect, it } from 'vitest'
import { csvCell, csvTable, zipFiles } from '../../../server/utils/csv'

describe('the one CSV writer of the exports', () => {
  it.each([
    ['=HYPERLINK("http://x")', '"\'=HYPERLINK(""http://x"")"'],
    ['+41 22', '\'+41 22'],
    ['-1+2', '\'-1+2'],
    ['@SUM(A1)', '\'@SUM(A1)'],
    ['\tstart', '\'\tstart'],
    ['Kestrel, upper', '"Kestrel, upper"'],
    ['plain', 'plain']
  ])('makes text a spreadsheet would run inert: %s', (text, cell) => {
    expect(csvCell(text)).toBe(cell)
  })

  it('writes numbers as they are, negative ones included, and empty cells for null', () => {
    expect(csvCell(-0.25)).toBe('-0.25')
    expect(csvCell(null)).toBe('')
    expect(csvCell(undefined)).toBe('')
  })

  it('writes one rectangular table with its header first, and refuses a row of the wrong width', () => {
    expect(csvTable(['a', 'b'], [[1, 'x'], [2, null]])).toBe('a,b\n1,x\n2,\n')
    expect(() => csvTable(['a', 'b'], [[1]])).toThrow(/1 cells for 2 columns/)
  })

  it('zips files that unzip to the same text', () => {
    const files = unzipSync(zipFiles({ 'README.txt': 'Read me — ünïcode', 'a.csv': 'a\n1\n' }))
    expect(strFromU8(files['README.txt']!)).toBe('Read me — ünïcode')
    expect(strFromU8(files['a.csv']!)).toBe('a\n1\n')
  })
})
