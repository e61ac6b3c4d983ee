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
  // Sums of x among ones and zeros: for 0/1 columns they are the cell counts.
  const sum1 = new Float64Array(k)
  const sum0 = new Float64Array(k)
  let n1 = 0
  for (let i = 0; i < n; i++) {
    const off = i * k
    if (y[i] === 1) {
      n1++
      for (let j = 1; j < k; j++) {
        const x = X[off + j]!
        if (x < min1[j]!) min1[j] = x
        if (x > max1[j]!) max1[j] = x
        sum1[j]! += x
        if (x !== 0 && x !== 1) binary[j] = 0
      }
    }
    else {
      for (let j = 1; j < k; j++) {
        const x = X[off + j]!
        if (x < min0[j]!) min0[j] = x
        if (x > max0[j]!) max0[j] = x
        sum0[j]! += x
        if (x !== 0 && x !== 1) binary[j] = 0
      }
    }
  }
  const n0 = n - n1
  const outcome = plan.outcomeLabel
  for (let j = 1; j < k; j++) {
    const term = plan.terms[j]!
    if (binary[j]) {
      // c<x><y>: rows with that column value and outcome
      const c11 = sum1[j]!
      const c01 = n1 - c11
      const c10 = sum0[j]!
      const c00 = n0 - c10
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
    }
    else if (max1[j] === min0[j]) {
      warnings.push({
        code: 'quasi_complete_separation',
        message: `quasi-complete separation: '${term.label}' below ${min0[j]} always has ${outcome} = 1 and above it always 0 (ties at ${min0[j]}); its coefficient tends to −infinity`,
        variables: [term.name]
      })
    }
  }
  return warnings
}
