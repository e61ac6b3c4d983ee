import { describe, expect, it } from 'vitest'
import { readSampleCsv } from '../../../shared/utils/sampling/list-csv'
import { CsvFileError } from '../../../shared/utils/imports/csv-rows'

describe('readSampleCsv', () => {
  it('reads farms in any column order and case, coordinates optional', () => {
    const { farms, problems } = readSampleCsv('Rank,FARM_CODE,head_name,hint,lat,lon\n0,KIR-001,Talo Mika,Blue gate,-1.25,36.5\n0,KIR-002,,,,\n1,KIR-101,Seda Wanu,By the mill,,\n')
    expect(problems).toEqual([])
    expect(farms).toEqual([
      { farmCode: 'KIR-001', rank: 0, headName: 'Talo Mika', hint: 'Blue gate', lat: -1.25, lon: 36.5 },
      { farmCode: 'KIR-002', rank: 0, headName: undefined, hint: undefined, lat: null, lon: null },
      { farmCode: 'KIR-101', rank: 1, headName: 'Seda Wanu', hint: 'By the mill', lat: null, lon: null }
    ])
  })

  it('reads decimal commas in a semicolon-separated file', () => {
    const { farms, problems } = readSampleCsv('farm_code;rank;lat;lon\nKIR-001;0;-1,25;36,5\n')
    expect(problems).toEqual([])
    expect(farms[0]).toMatchObject({ lat: -1.25, lon: 36.5 })
  })

  it('names every bad row and column (the header is row 1)', () => {
    const { problems } = readSampleCsv([
      'farm_code,rank,head_name,lat,lon',
      'KIR-001,0,Talo,,',
      'KIR 002,0,Mika,,',
      'KIR-003,first,Seda,,',
      'KIR-004,1,Wanu,-1.2,',
      'KIR-001,1,Again,,',
      'KIR-006,1,Same rank,,',
      'KIR-007,0,=cmd(),0x1A,3'
    ].join('\n'))
    expect(problems).toEqual(expect.arrayContaining([
      { row: 3, column: 'farm_code', message: 'Letters, digits and / _ . - only' },
      { row: 4, column: 'rank', message: expect.stringMatching(/rank/) },
      { row: 5, column: 'lon', message: 'Give both latitude and longitude, or neither' },
      { row: 6, column: 'farm_code', message: 'Farm KIR-001 is listed twice.' },
      { row: 7, column: 'rank', message: 'Two replacements have rank 1: give each its own place in the order.' },
      { row: 8, column: 'lat', message: expect.stringMatching(/number/) }
    ]))
  })

  it('refuses a file without the needed columns, and one without a main sample', () => {
    expect(readSampleCsv('code,name\nA,B\n').problems).toEqual([
      { row: 1, column: 'farm_code', message: 'The header has no column "farm_code".' },
      { row: 1, column: 'rank', message: 'The header has no column "rank".' }
    ])
    expect(readSampleCsv('farm_code,rank\nA-1,1\n').problems).toEqual([{ row: null, column: 'rank', message: 'The list has no main-sample farm (rank 0).' }])
  })

  it('refuses an unreadable file as a whole', () => {
    expect(() => readSampleCsv('')).toThrow(CsvFileError)
    expect(() => readSampleCsv('farm_code,rank\n')).toThrow(CsvFileError)
    expect(() => readSampleCsv('farm_code,rank,rank\nA,0,0\n')).toThrow(/twice/)
  })
})
