import type { SampleFarmRow } from '../../types/sample'
import type { SampleOutcome } from '../schemas/sample'

// What the tablet shows for each listed farm: to visit, visited, a non-interview (with the replacement chosen), or a
// replacement not needed yet. Pure: the cached list, the tablet's own visits and outcomes in, states out.

export type FarmStateKind = 'to_visit' | 'visited' | SampleOutcome | 'spare'

export interface FarmState {
  farm: SampleFarmRow
  kind: FarmStateKind
  note: string | null
  replacedBy: string | null
  /** The replacement standing for this main-sample (or earlier replacement) farm. */
  replaces: string | null
  /** Recorded on this tablet and not yet confirmed by the server. */
  waiting: boolean
}

export interface LocalOutcome { farmCode: string, outcome: SampleOutcome, note: string, replacedBy?: string | null, sent?: boolean, error?: string }

export function farmStates(farms: readonly SampleFarmRow[], visitedCodes: ReadonlySet<string>, local: readonly LocalOutcome[]): FarmState[] {
  const lower = (s: string) => s.toLowerCase()
  const localOf = new Map(local.filter(o => !o.error).map(o => [lower(o.farmCode), o]))
  const base = farms.map((farm) => {
    const mine = localOf.get(lower(farm.farmCode))
    const outcome = mine?.outcome ?? farm.outcome
    return {
      farm,
      visited: farm.visited || visitedCodes.has(lower(farm.farmCode)),
      outcome,
      note: mine?.note ?? farm.outcomeNote,
      replacedBy: mine ? (mine.replacedBy ?? null) : farm.replacedBy,
      waiting: Boolean(mine && !mine.sent)
    }
  })
  const replacing = new Map(base.filter(b => b.replacedBy).map(b => [lower(b.replacedBy!), b.farm.farmCode]))
  return base.map((b): FarmState => {
    const replaces = replacing.get(lower(b.farm.farmCode)) ?? null
    const kind: FarmStateKind = b.visited ? 'visited' : b.outcome ? b.outcome : b.farm.rank === 0 || replaces ? 'to_visit' : 'spare'
    return { farm: b.farm, kind, note: kind === 'visited' ? null : b.note, replacedBy: b.replacedBy, replaces, waiting: b.waiting }
  })
}

/** The replacement to use next: the lowest rank not visited, not already standing for a farm, with no outcome. */
export function nextSpare(states: readonly FarmState[]): SampleFarmRow | null {
  return states.filter(s => s.kind === 'spare').map(s => s.farm).sort((a, b) => a.rank - b.rank)[0] ?? null
}
