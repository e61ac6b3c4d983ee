import { describe, expect, it } from 'vitest'
import { auditActionLabel, csvField, neutraliseCell } from '../../shared/utils/audit-words'

describe('audit log words and CSV cells', () => {
  it.each(['=SUM(A1:A9)', '+1', '-2', '@cmd', '\tx', '\rx'])('neutralises %j so a spreadsheet reads text, not a formula', (cell) => {
    expect(neutraliseCell(cell)).toBe(`'${cell}`)
  })
  it('leaves ordinary text alone and quotes what needs quoting', () => {
    expect(neutraliseCell('Round · North')).toBe('Round · North')
    expect(csvField('a, "b"')).toBe('"a, ""b"""')
    expect(csvField('=1+1')).toBe('\'=1+1')
  })
  it('reads actions as words, also ones added later', () => {
    expect(auditActionLabel('user.role_changed')).toBe('Changed a role')
    expect(auditActionLabel('farm.merged')).toBe('Farm merged')
  })
})
