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
  /** Scenario name → predicted mean under the scenario. */
  scenarios: Record<string, number>
}

export type MapMode = 'predicted' | 'observed' | 'gap' | `scenario:${string}`
