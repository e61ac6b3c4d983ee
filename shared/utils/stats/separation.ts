/**
 * Detection of complete and quasi-complete separation by a single design column.
 *
 * Complete separation (some threshold on one column splits adopters from non-adopters
 * exactly) means the maximum likelihood estimate does not exist at all: thrown as
 * `complete_separation`. Quasi-complete separation (the split holds with ties at the
 * threshold, or one level of a 0/1 column has only one outcome) leaves that coefficient
 * infinite while the rest of the model still fits: returned as a warning, and the fit
 * usually ends with a very large coefficient and `not_converged`.
 * Separation by a combination of columns is caught after fitting through the share of
 * perfectly predicted rows (see `fit.ts`).
 */
import type { Design } from './design'
import { EngineInputError, type EngineWarning } from './errors'

export function checkSeparation(design: Design): EngineWarning[] {
  const { n, k, X, y, plan } = design
  const warnings: EngineWarning[] = []
  const min1 = new Float64Array(k).fill(Infinity)
  const max1 = new Float64Array(k).fill(-Infinity)
  const min0 = new Float64Array(k).fill(Infinity)
  const max0 = new Float64Array(k).fill(-Infinity)
  const binary = new Uint8Array(k).fill(1)
  // cells[j*4 + 2x + y]: counts for 0/1 columns
  const cells = new Float64Array(k * 4)
  for (let i = 0; i < n; i++) {
    const off = i * k
    const yi = y[i]!
    for (let j = 1; j < k; j++) {
      const x = X[off + j]!
      if (yi === 1) {
        if (x < min1[j]!) min1[j] = x
        if (x > max1[j]!) max1[j] = x
      } else {
        if (x < min0[j]!) min0[j] = x
        if (x > max0[j]!) max0[j] = x
      }
      if (x === 0 || x === 1) cells[j * 4 + 2 * x + yi]!++
      else binary[j] = 0
    }
  }
  const outcome = plan.outcomeLabel
  for (let j = 1; j < k; j++) {
    const term = plan.terms[j]!
    if (binary[j]) {
      const c00 = cells[j * 4]!
      const c01 = cells[j * 4 + 1]!
      const c10 = cells[j * 4 + 2]!
      const c11 = cells[j * 4 + 3]!
      if ((c01 === 0 && c10 === 0) || (c00 === 0 && c11 === 0)) {
        const dir = c01 === 0 ? 'exactly the rows with it have' : 'exactly the rows without it have'
        throw new EngineInputError('complete_separation',
          `complete separation: '${term.label}' predicts '${outcome}' perfectly (${dir} ${outcome} = 1); the model cannot be estimated`, [term.name])
      }
      const msgs: string[] = []
      if (c10 === 0) msgs.push(`every row with '${term.label}' = 1 has ${outcome} = 1`)
      if (c11 === 0) msgs.push(`every row with '${term.label}' = 1 has ${outcome} = 0`)
      if (c00 === 0) msgs.push(`every row with '${term.label}' = 0 has ${outcome} = 1`)
      if (c01 === 0) msgs.push(`every row with '${term.label}' = 0 has ${outcome} = 0`)
      if (msgs.length) {
        warnings.push({
          code: 'quasi_complete_separation',
          message: `quasi-complete separation: ${msgs.join('; ')}; its coefficient tends to ${c10 === 0 || c01 === 0 ? '+' : '−'}infinity and its standard error is not meaningful`,
          variables: [term.name]
        })
      }
      continue
    }
    if (min1[j]! > max0[j]!) {
      throw new EngineInputError('complete_separation',
        `complete separation: every row with '${term.label}' above ${max0[j]} has ${outcome} = 1 and every row at or below it has ${outcome} = 0; the model cannot be estimated`, [term.name])
    }
    if (max1[j]! < min0[j]!) {
      throw new EngineInputError('complete_separation',
        `complete separation: every row with '${term.label}' below ${min0[j]} has ${outcome} = 1 and every row at or above it has ${outcome} = 0; the model cannot be estimated`, [term.name])
    }
    if (min1[j] === max0[j]) {
      warnings.push({
        code: 'quasi_complete_separation',
        message: `quasi-complete separation: '${term.label}' above ${max0[j]} always has ${outcome} = 1 and below it always 0 (ties at ${max0[j]}); its coefficient tends to +infinity`,
        variables: [term.name]
      })
    } else if (max1[j] === min0[j]) {
      warnings.push({
        code: 'quasi_complete_separation',
        message: `quasi-complete separation: '${term.label}' below ${min0[j]} always has ${outcome} = 1 and above it always 0 (ties at ${min0[j]}); its coefficient tends to −infinity`,
        variables: [term.name]
      })
    }
  }
  return warnings
}
