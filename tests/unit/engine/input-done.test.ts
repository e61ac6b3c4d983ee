// runModel's inputDone: the host may let the input columns go once the design holds them, but only when no later
// step reads them again (weights for the survey columns, checks that rebuild the design, rounds).
import { describe, expect, it } from 'vitest'
import { runModel, type ModelSpec } from '../../../shared/utils/stats'

function columns(n: number) {
  let s = 5
  const u = () => (s = (s * 48271) % 2147483647) / 2147483647
  const x = Float64Array.from({ length: n }, () => u() * 2 - 1)
  const y = Float64Array.from(x, v => (v + u() - 0.5 > 0 ? 1 : 0))
  const w = Float64Array.from({ length: n }, () => 0.5 + u())
  return { x, y, w }
}
const base: ModelSpec = { outcome: 'y', covariates: [{ name: 'x', type: 'numeric' }], link: 'probit' }

describe('inputDone', () => {
  it('is called once for a plain model, and emptying the columns then leaves the results as they were', () => {
    const kept = runModel(columns(2000), base)
    const data: Record<string, unknown> = columns(2000)
    let calls = 0
    const released = runModel(data as never, base, {
      inputDone: () => {
        calls++
        for (const key of Object.keys(data)) Reflect.deleteProperty(data, key)
      }
    })
    expect(calls).toBe(1)
    expect(Object.keys(data)).toEqual([])
    expect({ ...released, timings: null }).toEqual({ ...kept, timings: null })
  })

  it('is not called when weights, checks or rounds read the columns again', () => {
    for (const spec of [{ ...base, weights: 'w', se: 'hc1' as const }, { ...base, checks: { linkTest: true } }]) {
      let calls = 0
      runModel(columns(2000), spec, { inputDone: () => calls++ })
      expect(calls, JSON.stringify(spec)).toBe(0)
    }
  })
})
