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
 * Test: with the correlation-scaled cross-product matrix C = D^{-1/2} X'X D^{-1/2}
 * (uncentred; the intercept is a column), column j is collinear when
 * 1 − c_j' C_kept^{-1} c_j < 1e-10, i.e. it has R² > 1 − 1e-10 on the kept columns.
 */
import type { Design } from './design'
import type { EngineWarning } from './errors'

const TOL = 1e-10

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
  const G = new Float64Array(k * k)
  for (let r = 0; r < n; r++) {
    const off = r * k
    for (let j = 0; j < k; j++) {
      const xj = X[off + j]!
      if (xj === 0) continue
      const base = j * k
      for (let m = 0; m <= j; m++) G[base + m]! += xj * X[off + m]!
    }
  }
  const terms = design.plan.terms
  const parents = parentsOf(design)
  const kept: number[] = []
  const dropped = new Set<number>()
  // L: Cholesky factor of C restricted to the kept columns, grown one row at a time.
  const L: number[][] = []
  const warnings: EngineWarning[] = []
  for (let j = 0; j < k; j++) {
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
    const gjj = G[j * k + j]!
    if (gjj === 0) {
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
    const m = kept.length
    const z = new Float64Array(m)
    for (let a = 0; a < m; a++) {
      const ka = kept[a]!
      const g = j > ka ? G[j * k + ka]! : G[ka * k + j]!
      let s = g / Math.sqrt(gjj * G[ka * k + ka]!)
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
      const involved = kept.filter((_, a) => Math.abs(beta[a]!) > 1e-6 * maxB)
      dropped.add(j)
      const names = involved.map(c => `'${terms[c]!.label}'`)
      warnings.push({
        code: 'collinear_column_dropped',
        message: `'${terms[j]!.label}' dropped: it is an exact linear combination of ${names.join(', ')} (the earlier column is kept)`,
        variables: [terms[j]!.name, ...involved.map(c => terms[c]!.name)]
      })
      continue
    }
    const row = Array.from(z)
    row.push(Math.sqrt(resid))
    L.push(row)
    kept.push(j)
  }
  if (dropped.size === 0) return design

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
  return { ...design, k: kNew, X: X.subarray(0, n * kNew), warnings: [...design.warnings, ...warnings] }
}
