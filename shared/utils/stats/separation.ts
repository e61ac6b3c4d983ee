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

/** Doubles of the column statistics for k columns (see `separationStatsRange`). */
export function separationStatsLength(k: number): number {
  return 7 * k + 1
}

/**
 * The statistics the check reads, over rows [start, end), written into `out` (7k + 1 doubles): per column the
 * minimum and maximum among ones and among zeros, the sums among ones and among zeros (for 0/1 columns the cell
 * counts), and 1 if it holds a value other than 0 and 1; last, the number of ones. Ranges can run on separate threads
 * and be merged with `mergeSeparationStats`.
 */
export function separationStatsRange(design: Design, start: number, end: number, out: Float64Array): void {
  const { k, X, y } = design
  const min1 = out.subarray(0, k).fill(Infinity)
  const max1 = out.subarray(k, 2 * k).fill(-Infinity)
  const min0 = out.subarray(2 * k, 3 * k).fill(Infinity)
  const max0 = out.subarray(3 * k, 4 * k).fill(-Infinity)
  const sum1 = out.subarray(4 * k, 5 * k).fill(0)
  const sum0 = out.subarray(5 * k, 6 * k).fill(0)
  const other = out.subarray(6 * k, 7 * k).fill(0)
  let n1 = 0
  for (let i = start; i < end; i++) {
    const off = i * k
    if (y[i] === 1) {
      n1++
      for (let j = 1; j < k; j++) {
        const x = X[off + j]!
        if (x < min1[j]!) min1[j] = x
        if (x > max1[j]!) max1[j] = x
        sum1[j]! += x
        if (x !== 0 && x !== 1) other[j] = 1
      }
    }
    else {
      for (let j = 1; j < k; j++) {
        const x = X[off + j]!
        if (x < min0[j]!) min0[j] = x
        if (x > max0[j]!) max0[j] = x
        sum0[j]! += x
        if (x !== 0 && x !== 1) other[j] = 1
      }
    }
  }
  out[7 * k] = n1
}

/** Ranges' statistics merged in order (a new array; the parts are left as they are). */
export function mergeSeparationStats(parts: Float64Array[], k: number): Float64Array {
  const out = Float64Array.from(parts[0]!.subarray(0, separationStatsLength(k)))
  for (const p of parts.slice(1)) {
    for (let j = 0; j < k; j++) {
      out[j] = Math.min(out[j]!, p[j]!)
      out[k + j] = Math.max(out[k + j]!, p[k + j]!)
      out[2 * k + j] = Math.min(out[2 * k + j]!, p[2 * k + j]!)
      out[3 * k + j] = Math.max(out[3 * k + j]!, p[3 * k + j]!)
      out[4 * k + j]! += p[4 * k + j]!
      out[5 * k + j]! += p[5 * k + j]!
      out[6 * k + j] = Math.max(out[6 * k + j]!, p[6 * k + j]!)
    }
    out[7 * k]! += p[7 * k]!
  }
  return out
}

/**
 * Throws for complete separation by one column and returns warnings for quasi-complete separation. `stats` are the
 * column statistics of all rows (from the pass pool); without them they are computed here, on this thread.
 */
export function checkSeparation(design: Design, stats?: Float64Array): EngineWarning[] {
  const { n, k, plan } = design
  let st = stats
  if (!st) {
    st = new Float64Array(separationStatsLength(k))
    separationStatsRange(design, 0, n, st)
  }
  const warnings: EngineWarning[] = []
  const min1 = st.subarray(0, k)
  const max1 = st.subarray(k, 2 * k)
  const min0 = st.subarray(2 * k, 3 * k)
  const max0 = st.subarray(3 * k, 4 * k)
  const sum1 = st.subarray(4 * k, 5 * k)
  const sum0 = st.subarray(5 * k, 6 * k)
  const n1 = st[7 * k]!
  const n0 = n - n1
  const outcome = plan.outcomeLabel
  for (let j = 1; j < k; j++) {
    const term = plan.terms[j]!
    if (st[6 * k + j] === 0) {
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
