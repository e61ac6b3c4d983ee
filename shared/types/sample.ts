import type { SampleOutcome } from '../utils/schemas/sample'
import type { ResponseRates } from '../utils/sampling/weights'

/** One listed farm as the coordinator's page and the assigned enumerator's tablet see it. */
export interface SampleFarmRow {
  farmCode: string
  rank: number
  headName: string | null
  hint: string | null
  lat: number | null
  lon: number | null
  outcome: SampleOutcome | null
  outcomeNote: string | null
  replacedBy: string | null
  /** A visit of the round in this village carries this farm code. */
  visited: boolean
}

/** One village of a round's sample: its facts, its list, its weight (or why none) and response rates. */
export interface SampleVillageView {
  villageId: number
  villageCode: string
  villageName: string
  listedFarms: number | null
  selectionProbability: number | null
  farms: SampleFarmRow[]
  weight: number | null
  weightProblem: string | null
  rates: ResponseRates
}

/** GET /api/rounds/:id/sample (coordinators). */
export interface RoundSample {
  roundId: number
  villages: SampleVillageView[]
}

/** The tablet's copy inside the round setup: the lists of the enumerator's own villages only. */
export interface FieldSampleList {
  roundId: number
  villageId: number
  farms: SampleFarmRow[]
}

/** A row-by-row problem of an uploaded list (row as a spreadsheet numbers it: the header is row 1). */
export interface SampleListProblem {
  row: number | null
  column: string | null
  message: string
}
