import { describe, expect, it } from 'vitest'
import { localMomentOf } from '../../app/utils/format'

describe('localMomentOf (the field app\'s times, without Intl)', () => {
  it('writes what the browser\'s own en-GB formatting writes, in the local time zone', () => {
    const intl = new Intl.DateTimeFormat('en-GB', { day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' })
    // Every month, single- and double-digit days and hours, midnight and the last minute of a day.
    const moments = ['2026-01-01T00:00:00Z', '2026-02-09T09:05:00Z', '2026-03-29T01:30:00Z', '2026-06-15T23:59:59Z', '2026-12-04T11:57:21.513Z']
    for (let m = 0; m < 12; m++) moments.push(new Date(2025, m, 1 + m * 2, m * 2, m * 5).toISOString())
    const withSeconds = new Intl.DateTimeFormat('en-GB', { day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit', second: '2-digit', hourCycle: 'h23' })
    for (const iso of moments) {
      expect(localMomentOf(iso)).toBe(intl.format(new Date(iso)))
      expect(localMomentOf(iso, { seconds: true })).toBe(withSeconds.format(new Date(iso)))
    }
  })

  it('shows a dash for nothing or for text that is not a moment', () => {
    expect(localMomentOf(null)).toBe('—')
    expect(localMomentOf('')).toBe('—')
    expect(localMomentOf('not a date')).toBe('—')
  })
})
