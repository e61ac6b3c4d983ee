import { describe, expect, it } from 'vitest'
import { chunkCount } from '../../../server/workers/pass-pool'

// How a pass over the rows is cut: enough chunks for the threads to even out an interrupted one, none smaller than
// 4,096 rows, and all partial sums within 16 MB (a cluster pass over many clusters has large partial sums).
describe('chunkCount', () => {
  it('cuts a large pass into eight chunks per thread', () => {
    expect(chunkCount(1_000_000, 2, 2 + 11 + 121)).toBe(16)
    expect(chunkCount(1_000_000, 4, 500 * 11)).toBe(32)
  })

  it('keeps chunks of at least 4,096 rows, and never fewer chunks than threads', () => {
    expect(chunkCount(20_000, 2, 134)).toBe(4)
    expect(chunkCount(5_000, 2, 134)).toBe(2)
  })

  it('keeps the partial sums within the memory budget', () => {
    // 100,000 farms as clusters, 11 terms: 8.8 MB of partial sums per chunk, so one per thread.
    expect(chunkCount(1_000_000, 2, 100_000 * 11)).toBe(2)
    // 20,000 clusters: 1.76 MB per chunk, nine fit in 16 MB.
    expect(chunkCount(1_000_000, 2, 20_000 * 11)).toBe(9)
  })
})
