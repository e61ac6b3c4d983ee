// Sampling weights from the sample lists. Pure: numbers in, numbers or a reason out.
//
// Two-stage design (our decision, said on the sample page): stage 1 drew the village with probability P_v (the
// coordinator gives it, however the villages were drawn: equal chance, proportional to size, …); stage 2 drew n_v
// farms with equal chance from the N_v farms the listing found (simple random sampling without replacement, so each
// listed farm was drawn with probability n_v / N_v). A farm's inclusion probability is P_v · n_v / N_v and its
// weight the inverse, 1 / (P_v · n_v / N_v) = N_v / (P_v · n_v) (the Horvitz–Thompson weight).
// A replacement stands for the main-sample farm it replaces: it takes the same weight, and n_v counts main-sample
// farms (rank 0) only, so using replacements does not change the weights (replacements are common practice in farm
// surveys; they assume the replacement resembles the farm it replaces, which non-response adjustment would not).

export interface VillageDesign {
  /** The village's name for messages. */
  village: string
  /** N_v: farms the listing found in the village. */
  listedFarms: number | null
  /** P_v: the probability that the village was drawn at stage 1. */
  selectionProbability: number | null
  /** n_v: main-sample farms (rank 0) on the village's list. */
  mainSample: number
}

export type VillageWeight = { ok: true, weight: number, withinProbability: number, inclusionProbability: number } | { ok: false, problem: string }

export function villageWeight(d: VillageDesign): VillageWeight {
  const cannot = (why: string): VillageWeight => ({ ok: false, problem: `The weight can't be computed for village ${d.village}: ${why}.` })
  if (d.listedFarms === null || !Number.isFinite(d.listedFarms)) return cannot('the number of farms listed is missing')
  if (d.listedFarms <= 0) return cannot('the number of farms listed is 0')
  if (d.selectionProbability === null || !Number.isFinite(d.selectionProbability)) return cannot('the probability that the village was drawn is missing')
  if (d.selectionProbability <= 0 || d.selectionProbability > 1) return cannot('the probability that the village was drawn must be more than 0 and at most 1')
  if (d.mainSample <= 0) return cannot('the list has no main-sample farm')
  if (d.mainSample > d.listedFarms) return cannot(`the main sample (${d.mainSample} farms) is larger than the ${d.listedFarms} farms listed`)
  const withinProbability = d.mainSample / d.listedFarms
  const inclusionProbability = d.selectionProbability * withinProbability
  return { ok: true, weight: 1 / inclusionProbability, withinProbability, inclusionProbability }
}

export interface SampleFarmState {
  rank: number
  outcome: 'refused' | 'absent' | 'moved' | null
  visited: boolean
}

export interface ResponseRates {
  mainSample: number
  /** Main-sample farms interviewed. */
  interviewed: number
  refused: number
  absent: number
  moved: number
  /** Replacements interviewed in place of a main-sample farm. */
  replacementsUsed: number
  /** interviewed / main sample; null without a main sample. */
  responseRate: number | null
  /** (interviewed + replacements used) / main sample: how much of the planned sample has an interview. */
  completion: number | null
}

/** Response rates of one village's list (a farm interviewed counts as interviewed even if a non-interview was recorded first). */
export function responseRates(farms: readonly SampleFarmState[]): ResponseRates {
  const main = farms.filter(f => f.rank === 0)
  const interviewed = main.filter(f => f.visited).length
  const notVisited = main.filter(f => !f.visited)
  const replacementsUsed = farms.filter(f => f.rank > 0 && f.visited).length
  return {
    mainSample: main.length,
    interviewed,
    refused: notVisited.filter(f => f.outcome === 'refused').length,
    absent: notVisited.filter(f => f.outcome === 'absent').length,
    moved: notVisited.filter(f => f.outcome === 'moved').length,
    replacementsUsed,
    responseRate: main.length ? interviewed / main.length : null,
    completion: main.length ? Math.min(1, (interviewed + replacementsUsed) / main.length) : null
  }
}
