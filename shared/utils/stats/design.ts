/**
 * Design matrix construction: named, typed covariates → a row-major Float64Array X (n×k),
 * outcome y, optional weights and cluster index, with readable term names.
 *
 * Columns, in order: intercept; per covariate its main column (numeric or yes/no) and
 * optional square, or one dummy per non-reference level (categorical); then the two-way
 * interactions. Rows with a missing value in any variable used are dropped listwise and
 * counted per variable. Exactly collinear columns are dropped (see `collinearity.ts`).
 */
import { dropCollinearColumns } from './collinearity'
import { EngineInputError, type EngineWarning } from './errors'
import type { CovariateSpec, CovariateType, DroppedRows, ModelSpec } from './types'
import { accessData, isCodedColumn, isMissing, toLevel, toNumber, toYesNo, type CodedColumn, type DataAccessor, type DataInput } from './values'

export type TermKind = 'intercept' | 'main' | 'square' | 'dummy' | 'interaction'

export interface TermInfo {
  /** Stable machine name, e.g. 'distance', 'log(distance)', 'distance^2', 'soil[clay]', 'a:b'. */
  name: string
  /** Display name, e.g. 'soil type: clay vs loam', 'a × b'. */
  label: string
  kind: TermKind
}

export interface CovariatePlan {
  name: string
  label: string
  type: CovariateType
  transform: 'log' | 'centre' | null
  /** Value subtracted when transform = 'centre'. */
  centre: number | null
  square: boolean
  levels: string[] | null
  reference: string | null
  nonReferenceLevels: string[]
  /** Column of the (transformed) value or yes/no indicator; −1 when dropped or categorical. */
  mainCol: number
  squareCol: number
  /** Column per non-reference level; −1 when that level's column was dropped. */
  dummyCols: number[]
  /** True when the covariate has no column left in the model. */
  dropped: boolean
}

export interface InteractionCol {
  col: number
  /** Level index (into nonReferenceLevels) of each part, or −1 for a numeric/yes-no value. */
  aLevel: number
  bLevel: number
}

export interface InteractionPlan {
  a: number
  b: number
  cols: InteractionCol[]
}

export interface DesignPlan {
  outcome: string
  outcomeLabel: string
  covariates: CovariatePlan[]
  interactions: InteractionPlan[]
  terms: TermInfo[]
  weights: string | null
  cluster: string | null
}

export interface Design {
  n: number
  k: number
  /** Row-major n×k. */
  X: Float64Array
  /** Outcome, 0 or 1. */
  y: Float64Array
  /** Sampling weights (> 0), or null. */
  w: Float64Array | null
  /** Cluster index 0..G−1 per row, or null. */
  cluster: Int32Array | null
  clusterLabels: string[]
  /** Row number in the input of each design row. */
  rowIndex: Int32Array
  plan: DesignPlan
  rows: DroppedRows
  warnings: EngineWarning[]
  /**
   * Per column, the level the fit subtracts before accumulating (0 for most columns; the mean
   * where a column's mean is over 100 standard deviations from 0), or null when none is needed.
   * Set by `dropCollinearColumns`; see `evaluateRangeShifted`.
   */
  shift?: Float64Array | null
}

function sqLabel(label: string): string {
  return `${label}, squared`
}

function valueLabel(c: CovariatePlan): string {
  if (c.transform === 'log') return `log ${c.label}`
  if (c.transform === 'centre') return `${c.label} (centred)`
  return c.label
}

function valueName(c: CovariatePlan): string {
  if (c.transform === 'log') return `log(${c.name})`
  if (c.transform === 'centre') return `${c.name}_c`
  return c.name
}

function partLabel(c: CovariatePlan, level: number): string {
  if (c.type === 'categorical') return `${c.label}: ${c.nonReferenceLevels[level]!}`
  return valueLabel(c)
}

function partName(c: CovariatePlan, level: number): string {
  if (c.type === 'categorical') return `${c.name}[${c.nonReferenceLevels[level]!}]`
  return valueName(c)
}

function validateSpec(spec: ModelSpec, acc: DataAccessor): void {
  const need = (name: string | undefined, role: string): void => {
    if (name === undefined) return
    if (!acc.has(name)) throw new EngineInputError('unknown_variable', `${role} '${name}' is not a column of the data`, [name])
  }
  need(spec.outcome, 'outcome')
  need(spec.weights, 'weights column')
  need(spec.cluster, 'cluster column')
  const seen = new Set<string>()
  for (const c of spec.covariates) {
    need(c.name, 'covariate')
    if (seen.has(c.name)) throw new EngineInputError('invalid_spec', `covariate '${c.name}' is listed twice`, [c.name])
    if (c.name === spec.outcome) throw new EngineInputError('invalid_spec', `the outcome '${c.name}' cannot also be a covariate`, [c.name])
    seen.add(c.name)
    const type = c.type ?? 'numeric'
    if (type !== 'numeric' && type !== 'yesno' && type !== 'categorical') {
      throw new EngineInputError('invalid_spec', `covariate '${c.name}' has unknown type '${String(type)}'`, [c.name])
    }
    if ((c.transform || c.square) && type !== 'numeric') {
      throw new EngineInputError('invalid_spec', `transforms apply to numeric covariates only ('${c.name}' is ${type})`, [c.name])
    }
    if (c.transform && c.transform !== 'log' && c.transform !== 'centre') {
      throw new EngineInputError('invalid_spec', `unknown transform '${String(c.transform)}' for '${c.name}'`, [c.name])
    }
  }
  for (const [a, b] of spec.interactions ?? []) {
    if (!seen.has(a) || !seen.has(b)) {
      throw new EngineInputError('invalid_spec', `interaction '${a} × ${b}' uses a variable that is not a covariate`, [a, b])
    }
    if (a === b) throw new EngineInputError('invalid_spec', `interaction of '${a}' with itself: use square instead`, [a])
  }
}

function makeCovariatePlan(c: CovariateSpec): CovariatePlan {
  return {
    name: c.name,
    label: c.label ?? c.name,
    type: c.type ?? 'numeric',
    transform: c.transform ?? null,
    centre: null,
    square: c.square ?? false,
    levels: null,
    reference: null,
    nonReferenceLevels: [],
    mainCol: -1,
    squareCol: -1,
    dummyCols: [],
    dropped: false
  }
}

/** Assigns column indices and term names for a plan whose levels and centres are known. */
function layoutColumns(plan: DesignPlan, interactions: Array<[string, string]>): void {
  const terms: TermInfo[] = [{ name: '(Intercept)', label: 'intercept', kind: 'intercept' }]
  for (const c of plan.covariates) {
    if (c.type === 'categorical') {
      c.dummyCols = c.nonReferenceLevels.map((lvl) => {
        terms.push({ name: `${c.name}[${lvl}]`, label: `${c.label}: ${lvl} vs ${c.reference!}`, kind: 'dummy' })
        return terms.length - 1
      })
    }
    else {
      terms.push({
        name: valueName(c),
        label: c.type === 'yesno' ? `${c.label}: yes vs no` : valueLabel(c),
        kind: 'main'
      })
      c.mainCol = terms.length - 1
      if (c.square) {
        terms.push({ name: `${valueName(c)}^2`, label: sqLabel(valueLabel(c)), kind: 'square' })
        c.squareCol = terms.length - 1
      }
    }
  }
  const index = new Map(plan.covariates.map((c, i) => [c.name, i]))
  plan.interactions = interactions.map(([an, bn]) => {
    const a = index.get(an)!
    const b = index.get(bn)!
    const ca = plan.covariates[a]!
    const cb = plan.covariates[b]!
    const aLevels = ca.type === 'categorical' ? ca.nonReferenceLevels.map((_, i) => i) : [-1]
    const bLevels = cb.type === 'categorical' ? cb.nonReferenceLevels.map((_, i) => i) : [-1]
    const cols: InteractionCol[] = []
    for (const al of aLevels) {
      for (const bl of bLevels) {
        terms.push({
          name: `${partName(ca, al)}:${partName(cb, bl)}`,
          label: `${partLabel(ca, al)} × ${partLabel(cb, bl)}`,
          kind: 'interaction'
        })
        cols.push({ col: terms.length - 1, aLevel: al, bLevel: bl })
      }
    }
    return { a, b, cols }
  })
  plan.terms = terms
}

/**
 * Per covariate, its value(s) for one row: [v] for numeric (transformed) and yes/no,
 * the non-reference level indicators for categorical. Fractions are allowed (means).
 */
export type Profile = Float64Array[]

export function emptyProfile(plan: DesignPlan): Profile {
  return plan.covariates.map(c => new Float64Array(c.type === 'categorical' ? c.nonReferenceLevels.length : 1))
}

/** Fills a full design row from a profile. */
export function fillRow(plan: DesignPlan, profile: Profile, out: Float64Array): void {
  out[0] = 1
  const cs = plan.covariates
  for (let c = 0; c < cs.length; c++) {
    const cp = cs[c]!
    const v = profile[c]!
    if (cp.type === 'categorical') {
      for (let l = 0; l < cp.dummyCols.length; l++) if (cp.dummyCols[l]! >= 0) out[cp.dummyCols[l]!] = v[l]!
    }
    else {
      if (cp.mainCol >= 0) out[cp.mainCol] = v[0]!
      if (cp.squareCol >= 0) out[cp.squareCol] = v[0]! * v[0]!
    }
  }
  for (const it of plan.interactions) {
    const va = profile[it.a]!
    const vb = profile[it.b]!
    for (const ic of it.cols) {
      if (ic.col < 0) continue
      out[ic.col] = va[ic.aLevel < 0 ? 0 : ic.aLevel]! * vb[ic.bLevel < 0 ? 0 : ic.bLevel]!
    }
  }
}

/** Reads a profile back from a design row (the inverse of `fillRow` on the kept columns). */
export function readProfile(plan: DesignPlan, row: ArrayLike<number>, offset: number, out: Profile): void {
  const cs = plan.covariates
  for (let c = 0; c < cs.length; c++) {
    const cp = cs[c]!
    const v = out[c]!
    if (cp.type === 'categorical') {
      for (let l = 0; l < cp.dummyCols.length; l++) v[l] = cp.dummyCols[l]! >= 0 ? row[offset + cp.dummyCols[l]!]! : 0
    }
    else {
      v[0] = cp.mainCol >= 0 ? row[offset + cp.mainCol]! : 0
    }
  }
}

/** Model-scale value v of a raw numeric covariate value x. */
export function transformValue(c: CovariatePlan, x: number, row: number): number {
  if (c.transform === 'log') {
    if (!(x > 0)) throw new EngineInputError('invalid_value', `log of '${c.name}' needs positive values; row ${row + 1} has ${x}`, [c.name])
    return Math.log(x)
  }
  if (c.transform === 'centre') return x - c.centre!
  return x
}

/** Raw value x of a model-scale value v (inverse of `transformValue`). */
export function untransformValue(c: CovariatePlan, v: number): number {
  if (c.transform === 'log') return Math.exp(v)
  if (c.transform === 'centre') return v + c.centre!
  return v
}

/** Fills profile slot c from one raw input value. */
function encodeValue(c: CovariatePlan, raw: unknown, row: number, slot: Float64Array): void {
  if (c.type === 'numeric') {
    slot[0] = transformValue(c, toNumber(raw, c.name, row), row)
  }
  else if (c.type === 'yesno') {
    const d = toYesNo(raw)
    if (d === null) throw new EngineInputError('invalid_value', `'${c.name}' must be yes/no, true/false or 0/1; row ${row + 1} has '${String(raw)}'`, [c.name])
    slot[0] = d
  }
  else {
    const lvl = toLevel(raw)
    slot.fill(0)
    const li = c.nonReferenceLevels.indexOf(lvl)
    if (li >= 0) slot[li] = 1
    else if (lvl !== c.reference) throw new EngineInputError('invalid_value', `'${c.name}' has level '${lvl}' that the model does not know (row ${row + 1})`, [c.name])
  }
}

function readOutcome(raw: unknown, name: string, row: number): 0 | 1 {
  const d = toYesNo(raw)
  if (d === null) {
    throw new EngineInputError('outcome_not_binary', `outcome '${name}' must be 0/1, yes/no or true/false; row ${row + 1} has '${String(raw)}'`, [name])
  }
  return d
}

/** The column as a typed array of numbers, when the data is column-oriented and it is one. */
function typedColumn(data: DataInput, name: string): Float64Array | Float32Array | Int32Array | null {
  if (Array.isArray(data)) return null
  const col = (data as Record<string, unknown>)[name]
  return col instanceof Float64Array || col instanceof Float32Array || col instanceof Int32Array ? col : null
}

/** The column as text codes, when the data is column-oriented and it is one. */
function codedColumn(data: DataInput, name: string): CodedColumn | null {
  const col = Array.isArray(data) ? null : (data as Record<string, unknown>)[name]
  return isCodedColumn(col) ? col : null
}

/** Writes one covariate's column(s) of X for all rows (the column-wise equivalent of `encodeValue` + `fillRow`). */
function fillCovariate(X: Float64Array, k: number, n: number, rowIndex: Int32Array, c: CovariatePlan, typed: ArrayLike<number> | null, get: (i: number) => unknown): void {
  if (c.type === 'numeric') {
    const col = c.mainCol
    const sq = c.squareCol
    for (let r = 0, o = 0; r < n; r++, o += k) {
      const i = rowIndex[r]!
      const raw = typed ? typed[i]! : get(i)
      const x = typeof raw === 'number' && Number.isFinite(raw) ? raw : toNumber(raw, c.name, i)
      const v = c.transform ? transformValue(c, x, i) : x
      X[o + col] = v
      if (sq >= 0) X[o + sq] = v * v
    }
    return
  }
  const slot = new Float64Array(c.type === 'categorical' ? c.nonReferenceLevels.length : 1)
  for (let r = 0, o = 0; r < n; r++, o += k) {
    const i = rowIndex[r]!
    encodeValue(c, typed ? typed[i]! : get(i), i, slot)
    if (c.type === 'yesno') X[o + c.mainCol] = slot[0]!
    else for (let l = 0; l < c.dummyCols.length; l++) X[o + c.dummyCols[l]!] = slot[l]!
  }
}

export interface DesignOptions {
  /**
   * Makes the buffer behind X, y, w and the cluster codes (default: a plain ArrayBuffer). A host that splits the
   * row passes across threads gives SharedArrayBuffers, so the threads read this design and no copy of it is made:
   * at 10^6 rows a copy was one more X (88 MB) at the server's peak memory. The buffer may be longer than asked
   * (WebAssembly memories come in 64-KB pages): the arrays are given their lengths.
   */
  arrayBuffer?: (bytes: number) => ArrayBufferLike
}

/**
 * Builds the design for `spec` from row- or column-oriented data.
 * Throws `EngineInputError` for unknown variables, unreadable values, a non-binary or
 * constant outcome, invalid weights, or fewer rows than parameters.
 */
export function buildDesign(data: DataInput, spec: ModelSpec, options: DesignOptions = {}): Design {
  const buffer = (bytes: number) => options.arrayBuffer?.(bytes) ?? new ArrayBuffer(bytes)
  const acc = accessData(data)
  validateSpec(spec, acc)
  const N = acc.nRows
  const covs = spec.covariates.map(makeCovariatePlan)
  const plan: DesignPlan = {
    outcome: spec.outcome,
    outcomeLabel: spec.outcomeLabel ?? spec.outcome,
    covariates: covs,
    interactions: [],
    terms: [],
    weights: spec.weights ?? null,
    cluster: spec.cluster ?? null
  }

  // Listwise deletion, counting each dropped row under the first missing variable.
  const vars: Array<{ name: string, label: string }> = [
    { name: spec.outcome, label: plan.outcomeLabel },
    ...covs.map(c => ({ name: c.name, label: c.label }))
  ]
  if (spec.weights) vars.push({ name: spec.weights, label: spec.weightsLabel ?? spec.weights })
  if (spec.cluster) vars.push({ name: spec.cluster, label: spec.cluster })
  // Typed numeric columns hold no missing values (NaN is a non-finite value, refused later): skip them here. A coded
  // column is missing where its code is −1 or its level is a missing text: decided once per level, not per row.
  const tests = vars.map((v): ((i: number) => boolean) | null => {
    if (typedColumn(data, v.name)) return null
    const c = codedColumn(data, v.name)
    if (c) {
      const missingLevel = Uint8Array.from(c.levels, l => (isMissing(l) ? 1 : 0))
      return i => c.codes[i]! < 0 || missingLevel[c.codes[i]!] === 1
    }
    const get = acc.column(v.name)
    return i => isMissing(get(i))
  })
  const dropCounts = new Array<number>(vars.length).fill(0)
  let rowIndex: Int32Array
  let n = 0
  if (tests.every(t => t === null)) {
    rowIndex = new Int32Array(N)
    for (let i = 0; i < N; i++) rowIndex[i] = i
    n = N
  }
  else {
    // Column by column (each loop calls one test, which V8 then inlines), the variables in reverse so that a row is
    // counted under the first of its variables that is missing. Row by row over every test took 10–20 ms at 10^5.
    const missingAt = new Int32Array(N).fill(-1)
    for (let v = tests.length - 1; v >= 0; v--) {
      const test = tests[v]
      if (!test) continue
      for (let i = 0; i < N; i++) if (test(i)) missingAt[i] = v
    }
    const keep = new Int32Array(N)
    for (let i = 0; i < N; i++) {
      const at = missingAt[i]!
      if (at >= 0) dropCounts[at]!++
      else keep[n++] = i
    }
    rowIndex = n === N ? keep : keep.slice(0, n)
  }
  const rows: DroppedRows = {
    totalRows: N,
    used: n,
    dropped: N - n,
    byVariable: vars.map((v, i) => ({ variable: v.name, label: v.label, count: dropCounts[i]! })).filter(d => d.count > 0)
  }
  const warnings: EngineWarning[] = []
  if (n < N) {
    warnings.push({
      code: 'rows_dropped_missing',
      message: `${N - n} of ${N} rows dropped for missing values (${rows.byVariable.map(d => `${d.label}: ${d.count}`).join(', ')})`,
      variables: rows.byVariable.map(d => d.variable)
    })
  }

  // Levels of categorical covariates and centres, from the rows actually used.
  for (const c of covs) {
    const get = acc.column(c.name)
    if (c.type === 'categorical') {
      const found = new Set<string>()
      for (let r = 0; r < n; r++) found.add(toLevel(get(rowIndex[r]!)))
      const spc = spec.covariates.find(s => s.name === c.name)!
      let levels: string[]
      if (spc.levels) {
        for (const f of found) {
          if (!spc.levels.includes(f)) throw new EngineInputError('invalid_value', `'${c.name}' has level '${f}' not in its declared levels`, [c.name])
        }
        levels = [...spc.levels]
      }
      else {
        levels = [...found].sort((p, q) => (p < q ? -1 : p > q ? 1 : 0))
      }
      const ref = spc.reference ?? levels[0]
      if (ref === undefined || !levels.includes(ref)) {
        throw new EngineInputError('invalid_spec', `reference level '${String(ref)}' of '${c.name}' does not occur`, [c.name])
      }
      c.levels = levels
      c.reference = ref
      c.nonReferenceLevels = levels.filter(l => l !== ref)
    }
    else if (c.transform === 'centre') {
      let s = 0
      for (let r = 0; r < n; r++) s += toNumber(get(rowIndex[r]!), c.name, rowIndex[r]!)
      c.centre = n > 0 ? s / n : 0
    }
  }
  layoutColumns(plan, spec.interactions ?? [])
  const kFull = plan.terms.length
  if (n <= kFull) {
    throw new EngineInputError('too_few_rows', `${n} usable rows for ${kFull} parameters: need more rows than parameters`)
  }

  // Fill X column by column (no per-row objects), then y, w, cluster. Same values as `fillRow` gives.
  const X = new Float64Array(buffer(n * kFull * 8), 0, n * kFull)
  const y = new Float64Array(buffer(n * 8), 0, n)
  // Plain numeric covariates held in typed arrays are copied column by column, straight from their arrays (without
  // the row index when no row was dropped); the intercept first. The others go through fillCovariate.
  const plain = covs.filter(c => c.type === 'numeric' && !c.transform && !c.square && typedColumn(data, c.name))
  for (let r = 0, o = 0; r < n; r++, o += kFull) X[o] = 1
  const allRows = n === N
  for (const c of plain) {
    const col = typedColumn(data, c.name)!
    const at = c.mainCol
    for (let r = 0, o = at; r < n; r++, o += kFull) {
      const i = allRows ? r : rowIndex[r]!
      const x = col[i]!
      if (!Number.isFinite(x)) toNumber(x, c.name, i)
      X[o] = x
    }
  }
  for (const c of covs) if (!plain.includes(c)) fillCovariate(X, kFull, n, rowIndex, c, typedColumn(data, c.name), acc.column(c.name))
  for (const it of plan.interactions) {
    const ca = covs[it.a]!
    const cb = covs[it.b]!
    for (const ic of it.cols) {
      const colA = ic.aLevel < 0 ? ca.mainCol : ca.dummyCols[ic.aLevel]!
      const colB = ic.bLevel < 0 ? cb.mainCol : cb.dummyCols[ic.bLevel]!
      for (let r = 0, o = 0; r < n; r++, o += kFull) X[o + ic.col] = X[o + colA]! * X[o + colB]!
    }
  }
  const outGet = acc.column(spec.outcome)
  let ones = 0
  for (let r = 0; r < n; r++) {
    const i = rowIndex[r]!
    y[r] = readOutcome(outGet(i), spec.outcome, i)
    ones += y[r]!
  }
  if (ones === 0 || ones === n) {
    throw new EngineInputError('outcome_constant', `outcome '${spec.outcome}' is ${ones === 0 ? 0 : 1} for all ${n} rows used: nothing to explain`, [spec.outcome])
  }
  let w: Float64Array | null = null
  if (spec.weights) {
    w = new Float64Array(buffer(n * 8), 0, n)
    const get = acc.column(spec.weights)
    for (let r = 0; r < n; r++) {
      const v = toNumber(get(rowIndex[r]!), spec.weights, rowIndex[r]!)
      if (!(v > 0)) throw new EngineInputError('invalid_value', `weights must be positive; '${spec.weights}' is ${v} in row ${rowIndex[r]! + 1}`, [spec.weights])
      w[r] = v
    }
  }
  let cluster: Int32Array | null = null
  let clusterLabels: string[] = []
  if (spec.cluster) {
    const typed = typedColumn(data, spec.cluster)
    cluster = new Int32Array(buffer(n * 4), 0, n)
    const coded = codedColumn(data, spec.cluster)
    if (coded) {
      // Coded text: labels from the levels the rows use, indices through a code → index table.
      const used = new Uint8Array(coded.levels.length)
      for (let r = 0; r < n; r++) used[coded.codes[rowIndex[r]!]!] = 1
      clusterLabels = [...new Set(coded.levels.filter((_, c) => used[c]).map(l => toLevel(l)))].sort((p, q) => (p < q ? -1 : p > q ? 1 : 0))
      const byLabel = new Map(clusterLabels.map((l, g) => [l, g]))
      const table = Int32Array.from(coded.levels, l => byLabel.get(toLevel(l)) ?? -1)
      for (let r = 0; r < n; r++) cluster[r] = table[coded.codes[rowIndex[r]!]!]!
    }
    else if (typed) {
      // Numeric cluster codes: the distinct values first, one label each (same labels and order as below).
      const seen = new Set<number>()
      for (let r = 0; r < n; r++) seen.add(typed[rowIndex[r]!]!)
      const distinct = [...seen]
      clusterLabels = distinct.map(v => toLevel(v)).sort((p, q) => (p < q ? -1 : p > q ? 1 : 0))
      const byLabel = new Map(clusterLabels.map((l, g) => [l, g]))
      const idx = new Map(distinct.map(v => [v, byLabel.get(toLevel(v))!]))
      for (let r = 0; r < n; r++) cluster[r] = idx.get(typed[rowIndex[r]!]!)!
    }
    else {
      const get = acc.column(spec.cluster)
      const labels = new Array<string>(n)
      for (let r = 0; r < n; r++) labels[r] = toLevel(get(rowIndex[r]!))
      clusterLabels = [...new Set(labels)].sort((p, q) => (p < q ? -1 : p > q ? 1 : 0))
      const idx = new Map(clusterLabels.map((l, g) => [l, g]))
      for (let r = 0; r < n; r++) cluster[r] = idx.get(labels[r]!)!
    }
  }
  const design: Design = { n, k: kFull, X, y, w, cluster, clusterLabels, rowIndex, plan, rows, warnings }
  return dropCollinearColumns(design)
}

/**
 * A design from an existing row-major matrix whose FIRST column is the intercept (all 1)
 * and whose other columns are plain numeric covariates named `names`. Used for large
 * generated data (no per-row objects) and for reference checks on prepared designs.
 */
export function designFromMatrix(
  X: Float64Array,
  y: Float64Array,
  names: string[],
  options: { weights?: Float64Array, cluster?: Int32Array, clusterLabels?: string[], outcome?: string } = {}
): Design {
  const k = names.length + 1
  const n = y.length
  if (X.length !== n * k) throw new EngineInputError('invalid_spec', `matrix has ${X.length} cells, expected ${n}×${k}`)
  for (let i = 0; i < X.length; i++) {
    if (!Number.isFinite(X[i]!)) throw new EngineInputError('non_finite_input', `non-finite value in column '${i % k === 0 ? '(Intercept)' : names[(i % k) - 1]!}' at row ${Math.floor(i / k) + 1}`, [names[(i % k) - 1] ?? '(Intercept)'])
  }
  let ones = 0
  for (let i = 0; i < n; i++) {
    if (y[i] !== 0 && y[i] !== 1) throw new EngineInputError('outcome_not_binary', `outcome must be 0 or 1; row ${i + 1} has ${y[i]}`)
    ones += y[i]!
  }
  if (ones === 0 || ones === n) throw new EngineInputError('outcome_constant', `outcome is ${ones === 0 ? 0 : 1} for all ${n} rows`)
  if (n <= k) throw new EngineInputError('too_few_rows', `${n} rows for ${k} parameters: need more rows than parameters`)
  if (options.weights) {
    for (let i = 0; i < n; i++) {
      if (!(options.weights[i]! > 0) || !Number.isFinite(options.weights[i]!)) throw new EngineInputError('invalid_value', `weights must be positive and finite (row ${i + 1})`)
    }
  }
  const covs = names.map(name => makeCovariatePlan({ name }))
  const plan: DesignPlan = {
    outcome: options.outcome ?? 'y',
    outcomeLabel: options.outcome ?? 'y',
    covariates: covs,
    interactions: [],
    terms: [],
    weights: options.weights ? 'weights' : null,
    cluster: options.cluster ? 'cluster' : null
  }
  layoutColumns(plan, [])
  let clusterLabels = options.clusterLabels ?? []
  if (options.cluster && !options.clusterLabels) {
    let g = 0
    for (let i = 0; i < n; i++) g = Math.max(g, options.cluster[i]! + 1)
    clusterLabels = Array.from({ length: g }, (_, i) => String(i))
  }
  const rowIndex = new Int32Array(n)
  for (let i = 0; i < n; i++) rowIndex[i] = i
  const design: Design = {
    n, k, X, y, w: options.weights ?? null, cluster: options.cluster ?? null, clusterLabels, rowIndex, plan,
    rows: { totalRows: n, used: n, dropped: 0, byVariable: [] },
    warnings: []
  }
  return dropCollinearColumns(design)
}

/**
 * Encodes new rows with an existing plan (same levels, centres and columns), for
 * prediction. Rows with a missing covariate get no design row; `rowIndex` says which
 * input rows were encoded.
 */
export function encodeRows(plan: DesignPlan, data: DataInput): { X: Float64Array, n: number, rowIndex: Int32Array } {
  const acc = accessData(data)
  const active = plan.covariates.filter(c => !c.dropped)
  for (const c of active) {
    if (!acc.has(c.name)) throw new EngineInputError('unknown_variable', `covariate '${c.name}' is not a column of the new data`, [c.name])
  }
  const k = plan.terms.length
  const getters = plan.covariates.map(c => (c.dropped ? null : acc.column(c.name)))
  const profile = emptyProfile(plan)
  const rowBuf = new Float64Array(k)
  const keep: number[] = []
  const out: number[] = []
  for (let i = 0; i < acc.nRows; i++) {
    let ok = true
    for (let c = 0; c < plan.covariates.length; c++) {
      const get = getters[c]
      if (!get) continue
      const raw = get(i)
      if (isMissing(raw)) {
        ok = false
        break
      }
      encodeValue(plan.covariates[c]!, raw, i, profile[c]!)
    }
    if (!ok) continue
    rowBuf.fill(0)
    fillRow(plan, profile, rowBuf)
    for (let j = 0; j < k; j++) out.push(rowBuf[j]!)
    keep.push(i)
  }
  return { X: Float64Array.from(out), n: keep.length, rowIndex: Int32Array.from(keep) }
}
