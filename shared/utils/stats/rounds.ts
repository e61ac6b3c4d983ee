/**
 * Several survey rounds together.
 *
 * - Pooled with round effects: the round column enters as a categorical covariate (first
 *   round the reference), so each round has its own adoption level.
 * - Correlated random effects (Mundlak 1978; Chamberlain 1984): for farms seen in several
 *   rounds, a farm random intercept u_f is allowed to be correlated with the covariates
 *   through their farm means: P(y_ft = 1) = F(x_ft'β + x̄_f'ξ + σu_f). The means are added
 *   for numeric covariates that vary within farms (a covariate constant within every farm
 *   would duplicate its own mean); the random intercept is the village random-intercept
 *   module with the farm as the group.
 * - Transitions: per pair of consecutive rounds, counts of farms seen in both that stayed
 *   non-adopters, adopted, dis-adopted or stayed adopters.
 * All pure functions on the data as given.
 */
import { EngineInputError } from './errors'
import type { ModelSpec, RoundTransition } from './types'
import { accessData, isMissing, toLevel, toNumber, toYesNo, type DataInput } from './values'

/** Round labels in order: numerically when all are numbers, else as text. */
export function roundOrder(labels: Iterable<string>): string[] {
  const all = [...new Set(labels)]
  const numeric = all.every(l => l.trim() !== '' && Number.isFinite(Number(l)))
  return all.sort((a, b) => (numeric ? Number(a) - Number(b) : a.localeCompare(b)))
}

/** Adopt/dis-adopt counts between consecutive rounds for farms seen in both. */
export function transitionTable(data: DataInput, outcome: string, round: string, panelId: string): RoundTransition[] {
  const acc = accessData(data)
  for (const name of [outcome, round, panelId]) {
    if (!acc.has(name)) throw new EngineInputError('unknown_variable', `'${name}' is not a column of the data`, [name])
  }
  const gy = acc.column(outcome)
  const gr = acc.column(round)
  const gp = acc.column(panelId)
  const byRound = new Map<string, Map<string, 0 | 1>>()
  for (let i = 0; i < acc.nRows; i++) {
    const yv = gy(i)
    const rv = gr(i)
    const pv = gp(i)
    if (isMissing(yv) || isMissing(rv) || isMissing(pv)) continue
    const y = toYesNo(yv)
    if (y === null) continue
    const r = toLevel(rv)
    let m = byRound.get(r)
    if (!m) byRound.set(r, (m = new Map()))
    const farm = toLevel(pv)
    if (m.has(farm)) throw new EngineInputError('invalid_value', `farm '${farm}' appears twice in round '${r}'`, [panelId, round])
    m.set(farm, y)
  }
  const order = roundOrder(byRound.keys())
  const out: RoundTransition[] = []
  for (let t = 1; t < order.length; t++) {
    const a = byRound.get(order[t - 1]!)!
    const b = byRound.get(order[t]!)!
    const c = { stayedNon: 0, adopted: 0, disAdopted: 0, stayedAdopter: 0 }
    for (const [farm, y0] of a) {
      const y1 = b.get(farm)
      if (y1 === undefined) continue
      if (y0 === 0 && y1 === 0) c.stayedNon++
      else if (y0 === 0) c.adopted++
      else if (y1 === 0) c.disAdopted++
      else c.stayedAdopter++
    }
    const seenBoth = c.stayedNon + c.adopted + c.disAdopted + c.stayedAdopter
    out.push({
      from: order[t - 1]!,
      to: order[t]!,
      farmsInBoth: seenBoth,
      ...c,
      adoptionRate: c.adopted + c.stayedNon > 0 ? c.adopted / (c.adopted + c.stayedNon) : null,
      disAdoptionRate: c.disAdopted + c.stayedAdopter > 0 ? c.disAdopted / (c.disAdopted + c.stayedAdopter) : null
    })
  }
  return out
}

/** The spec with the round column added as a categorical covariate (first round the reference). */
export function withRoundEffects(spec: ModelSpec, data: DataInput, round: string): ModelSpec {
  if (spec.covariates.some(c => c.name === round)) return spec
  const acc = accessData(data)
  if (!acc.has(round)) throw new EngineInputError('unknown_variable', `round column '${round}' is not a column of the data`, [round])
  const get = acc.column(round)
  const labels: string[] = []
  for (let i = 0; i < acc.nRows; i++) if (!isMissing(get(i))) labels.push(toLevel(get(i)))
  const levels = roundOrder(labels)
  return { ...spec, covariates: [...spec.covariates, { name: round, label: 'round', type: 'categorical', levels, reference: levels[0] }] }
}

/**
 * Adds farm means of the numeric covariates that vary within farms, as columns
 * `<name>__farm_mean`, and returns column-oriented data and the extended spec.
 */
export function withFarmMeans(data: DataInput, spec: ModelSpec, panelId: string): { data: Record<string, unknown[]>, spec: ModelSpec, meanOf: string[] } {
  const acc = accessData(data)
  if (!acc.has(panelId)) throw new EngineInputError('unknown_variable', `farm id column '${panelId}' is not a column of the data`, [panelId])
  const names = new Set<string>([spec.outcome, panelId, ...spec.covariates.map(c => c.name)])
  for (const extra of [spec.cluster, spec.weights, spec.strata, spec.fpc]) if (extra) names.add(extra)
  const cols: Record<string, unknown[]> = {}
  for (const name of names) {
    if (!acc.has(name)) continue
    const get = acc.column(name)
    cols[name] = Array.from({ length: acc.nRows }, (_, i) => get(i))
  }
  const farm = cols[panelId]!.map(v => (isMissing(v) ? null : toLevel(v)))
  const meanOf: string[] = []
  const covariates = [...spec.covariates]
  for (const c of spec.covariates) {
    if ((c.type ?? 'numeric') !== 'numeric' || c.transform === 'log') continue
    const raw = cols[c.name]!
    const sum = new Map<string, number>()
    const cnt = new Map<string, number>()
    const first = new Map<string, number>()
    let varies = false
    raw.forEach((v, i) => {
      const f = farm[i] ?? null
      if (f === null || isMissing(v)) return
      const x = toNumber(v, c.name, i)
      sum.set(f, (sum.get(f) ?? 0) + x)
      cnt.set(f, (cnt.get(f) ?? 0) + 1)
      if (!first.has(f)) first.set(f, x)
      else if (first.get(f) !== x) varies = true
    })
    if (!varies) continue
    const col = `${c.name}__farm_mean`
    cols[col] = farm.map(f => (f === null || !cnt.has(f) ? null : sum.get(f)! / cnt.get(f)!))
    covariates.push({ name: col, label: `${c.label ?? c.name}, farm mean` })
    meanOf.push(c.name)
  }
  return { data: cols, spec: { ...spec, covariates }, meanOf }
}
