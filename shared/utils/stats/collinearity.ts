/**
 * Exact collinearity among design columns.
 *
 * Choice (documented): columns are examined in design order, and a column that is an
 * exact linear combination of the columns KEPT before it is dropped, with a warning
 * naming the dropped column and the columns it is a combination of. Earlier columns
 * win because the order reflects the coordinator's list of covariates. A column whose
 * parent was dropped (the square or an interaction of a dropped main column, or an
 * interaction of a dropped dummy) is dropped with it.
 *
 * Test (scale- and shift-invariant): column 0 is the intercept; every other column is centred
 * (about its mean) and scaled, i.e. the test works on the correlation matrix R of the
 * non-intercept columns. Column j is
 *   - zero when every value is 0;
 *   - constant (a multiple of the intercept) when its standard deviation is below 1e-10 of its
 *     root mean square, i.e. it does not vary at the precision of a double;
 *   - collinear when 1 − r_j' R_kept^{-1} r_j < 1e-10, i.e. it has R² > 1 − 1e-10 on the kept
 *     columns and the intercept.
 * Centring matters: an uncentred test calls any column whose spread is small beside its level
 * (a date coded yyyymmdd within one month, 1e5 + N(0,1)) a copy of the intercept. The centred
 * cross-products come from one pass over data shifted by the first row (the shifted-data
 * algorithm), so no precision is lost to the level of a column either.
 */
import type { Design } from './design'
import type { EngineWarning } from './errors'

const TOL = 1e-10
/** A column is constant when Σ(x − x̄)² ≤ 1e-20 Σ x², i.e. its standard deviation is below 1e-10 of its root mean square. */
const CONSTANT_TOL = 1e-20

function parentsOf(design: Design): number[][] {
  const k = design.k
  const parents: number[][] = Array.from({ length: k }, () => [])
  const plan = design.plan
  for (const c of plan.covariates) {
    if (c.squareCol >= 0) parents[c.squareCol]!.push(c.mainCol)
  }
  for (const it of plan.interactions) {
    const ca = plan.covariates[it.a]!
    const cb = plan.covariates[it.b]!
    for (const ic of it.cols) {
      parents[ic.col]!.push(ic.aLevel < 0 ? ca.mainCol : ca.dummyCols[ic.aLevel]!)
      parents[ic.col]!.push(ic.bLevel < 0 ? cb.mainCol : cb.dummyCols[ic.bLevel]!)
    }
  }
  return parents
}

/** Returns the design with collinear columns removed (X compacted in place) and warnings added. */
export function dropCollinearColumns(design: Design): Design {
  const { n, k, X } = design
  // Shifted sums: S = Σ (x − s)(x − s)', T = Σ (x − s), U_j = Σ x_j², s = the first row.
  const first = X.slice(0, k)
  const S = new Float64Array(k * k)
  const T = new Float64Array(k)
  const U = new Float64Array(k)
  // Four rows per step (as the likelihood pass does): each cell of S is loaded and stored once per four rows. A
  // column whose four shifted values are all 0 (a dummy's usual case) adds nothing to its row of S.
  const d1 = new Float64Array(k)
  const d2 = new Float64Array(k)
  const d3 = new Float64Array(k)
  const d4 = new Float64Array(k)
  let r = 0
  for (; r + 3 < n; r += 4) {
    const o1 = r * k
    const o2 = o1 + k
    const o3 = o2 + k
    const o4 = o3 + k
    for (let j = 1; j < k; j++) {
      const x1 = X[o1 + j]!
      const x2 = X[o2 + j]!
      const x3 = X[o3 + j]!
      const x4 = X[o4 + j]!
      U[j]! += x1 * x1 + x2 * x2 + x3 * x3 + x4 * x4
      const f = first[j]!
      const a1 = x1 - f
      const a2 = x2 - f
      const a3 = x3 - f
      const a4 = x4 - f
      d1[j] = a1
      d2[j] = a2
      d3[j] = a3
      d4[j] = a4
      T[j]! += a1 + a2 + a3 + a4
      if (a1 === 0 && a2 === 0 && a3 === 0 && a4 === 0) continue
      const base = j * k
      for (let m = 1; m <= j; m++) S[base + m]! += a1 * d1[m]! + a2 * d2[m]! + a3 * d3[m]! + a4 * d4[m]!
    }
  }
  for (; r < n; r++) {
    const off = r * k
    for (let j = 1; j < k; j++) {
      const x = X[off + j]!
      U[j]! += x * x
      const dj = x - first[j]!
      d1[j] = dj
      T[j]! += dj
      if (dj === 0) continue
      const base = j * k
      for (let m = 1; m <= j; m++) S[base + m]! += dj * d1[m]!
    }
  }
  // Centred cross-products C and means.
  const C = new Float64Array(k * k)
  const mean = new Float64Array(k)
  for (let j = 1; j < k; j++) {
    mean[j] = first[j]! + T[j]! / n
    for (let m = 1; m <= j; m++) {
      C[j * k + m] = S[j * k + m]! - (T[j]! * T[m]!) / n
      C[m * k + j] = C[j * k + m]!
    }
  }
  const terms = design.plan.terms
  const parents = parentsOf(design)
  const kept: number[] = [0]
  const keptVarying: number[] = []
  const dropped = new Set<number>()
  // L: Cholesky factor of the correlation matrix of the kept non-intercept columns, grown one row at a time.
  const L: number[][] = []
  const warnings: EngineWarning[] = []
  for (let j = 1; j < k; j++) {
    const deadParent = parents[j]!.find(p => dropped.has(p))
    if (deadParent !== undefined) {
      dropped.add(j)
      warnings.push({
        code: 'collinear_column_dropped',
        message: `'${terms[j]!.label}' dropped because '${terms[deadParent]!.label}' was dropped`,
        variables: [terms[j]!.name, terms[deadParent]!.name]
      })
      continue
    }
    if (U[j] === 0) {
      dropped.add(j)
      const isDummy = terms[j]!.kind === 'dummy'
      warnings.push({
        code: isDummy ? 'empty_level_dropped' : 'collinear_column_dropped',
        message: isDummy
          ? `'${terms[j]!.label}' dropped: no rows have this level`
          : `'${terms[j]!.label}' dropped: it is zero for every row`,
        variables: [terms[j]!.name]
      })
      continue
    }
    const cjj = C[j * k + j]!
    if (!(cjj > CONSTANT_TOL * U[j]!)) {
      dropped.add(j)
      warnings.push({
        code: 'collinear_column_dropped',
        message: `'${terms[j]!.label}' dropped: it has the same value in every row, so it is a multiple of '${terms[0]!.label}'`,
        variables: [terms[j]!.name, terms[0]!.name]
      })
      continue
    }
    const m = keptVarying.length
    const z = new Float64Array(m)
    for (let a = 0; a < m; a++) {
      const ka = keptVarying[a]!
      let s = C[j * k + ka]! / Math.sqrt(cjj * C[ka * k + ka]!)
      for (let b = 0; b < a; b++) s -= L[a]![b]! * z[b]!
      z[a] = s / L[a]![a]!
    }
    let zz = 0
    for (let a = 0; a < m; a++) zz += z[a]! * z[a]!
    const resid = 1 - zz
    if (resid < TOL) {
      // Regression coefficients (scaled) of column j on the kept columns: L' beta = z.
      const beta = new Float64Array(m)
      for (let a = m - 1; a >= 0; a--) {
        let s = z[a]!
        for (let b = a + 1; b < m; b++) s -= L[b]![a]! * beta[b]!
        beta[a] = s / L[a]![a]!
      }
      let maxB = 0
      for (let a = 0; a < m; a++) maxB = Math.max(maxB, Math.abs(beta[a]!))
      // The intercept of x_j = c + Σ b_a x_a, on the original scale.
      let c = mean[j]!
      for (let a = 0; a < m; a++) {
        const ka = keptVarying[a]!
        c -= beta[a]! * Math.sqrt(cjj / C[ka * k + ka]!) * mean[ka]!
      }
      const withIntercept = Math.abs(c) > 1e-8 * Math.sqrt(U[j]! / n)
      const involved = [
        ...(withIntercept ? [0] : []),
        ...keptVarying.filter((_, a) => Math.abs(beta[a]!) > 1e-6 * maxB)
      ]
      dropped.add(j)
      const names = involved.map(col => `'${terms[col]!.label}'`)
      warnings.push({
        code: 'collinear_column_dropped',
        message: `'${terms[j]!.label}' dropped: it is an exact linear combination of ${names.join(', ')} (the earlier column is kept)`,
        variables: [terms[j]!.name, ...involved.map(col => terms[col]!.name)]
      })
      continue
    }
    const row = Array.from(z)
    row.push(Math.sqrt(resid))
    L.push(row)
    kept.push(j)
    keptVarying.push(j)
  }
  // Levels the fit subtracts: a column whose mean is over 100 sd from 0 makes the uncentred Hessian ill-conditioned.
  let shiftFull: Float64Array | null = null
  for (const j of keptVarying) {
    const sd = Math.sqrt(C[j * k + j]! / n)
    if (Math.abs(mean[j]!) > 100 * sd) {
      shiftFull ??= new Float64Array(k)
      shiftFull[j] = mean[j]!
    }
  }
  if (dropped.size === 0) return { ...design, shift: shiftFull }

  const map = new Int32Array(k).fill(-1)
  kept.forEach((old, t) => {
    map[old] = t
  })
  const plan = design.plan
  const remap = (c: number): number => (c >= 0 ? map[c]! : -1)
  for (const c of plan.covariates) {
    c.mainCol = remap(c.mainCol)
    c.squareCol = remap(c.squareCol)
    c.dummyCols = c.dummyCols.map(remap)
    c.dropped = c.type === 'categorical' ? c.dummyCols.every(d => d < 0) : c.mainCol < 0
  }
  for (const it of plan.interactions) for (const ic of it.cols) ic.col = remap(ic.col)
  plan.terms = kept.map(j => terms[j]!)
  const kNew = kept.length
  for (let r = 0; r < n; r++) {
    const src = r * k
    const dst = r * kNew
    for (let t = 0; t < kNew; t++) X[dst + t] = X[src + kept[t]!]!
  }
  const shift = shiftFull ? Float64Array.from(kept, j => shiftFull![j]!) : null
  return { ...design, k: kNew, X: X.subarray(0, n * kNew), warnings: [...design.warnings, ...warnings], shift }
}
