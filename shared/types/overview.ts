// What the adoption map and the funder view receive: village aggregates only, never household records.
import type { Geometry } from 'geojson'

export interface MapVillage {
  code: string
  name: string
  lat: number
  lon: number
  boundary: Geometry | null
  /** Visits behind the figures; null when the village is suppressed for having too few. */
  visits: number | null
  suppressed: boolean
  observedRate: number | null
  predicted: { estimate: number, ciLow: number | null, ciHigh: number | null } | null
  /** Fewer visits than the round's target of visits per village (known for suppressed villages too). */
  belowVisitTarget: boolean
  /** Scenario name → predicted mean under the scenario. */
  scenarios: Record<string, number>
}

export type MapMode = 'predicted' | 'observed' | 'gap' | `scenario:${string}`

/** What the publish preview shows the coordinator: the funder's headline, map and table before publishing. */
export interface PublishPreview {
  round: { round: string, technology: string, season: string }
  minVisits: number
  headline: { farmsVisited: number, observedRate: number, predicted: { estimate: number, ciLow: number | null, ciHigh: number | null }, villages: number, suppressedVillages: number, targetRate: number, villagesBelowTarget: number, targetVisits: number | null, villagesBelowVisitTarget: number }
  villages: MapVillage[]
  scenarios: string[]
}
