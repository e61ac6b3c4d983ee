import type { Question } from '#shared/utils/schemas/questionnaire'
import { ownValue } from '#shared/utils/schemas/safe-text'
import type { VisitFlags } from '../db/models'

// Quality flags computed on the server for every stored visit. Pure functions: the sync service
// gathers what they need (village centres, the questionnaire, earlier farm codes) in bulk queries.

export interface FlagSettings {
  farRadiusKm: number
  minInterviewSeconds: number
}

const EARTH_RADIUS_KM = 6371.0088

/** Great-circle distance by the haversine formula. */
export function haversineKm(lat1: number, lon1: number, lat2: number, lon2: number): number {
  const rad = Math.PI / 180
  const dLat = (lat2 - lat1) * rad
  const dLon = (lon2 - lon1) * rad
  const a = Math.sin(dLat / 2) ** 2 + Math.cos(lat1 * rad) * Math.cos(lat2 * rad) * Math.sin(dLon / 2) ** 2
  return 2 * EARTH_RADIUS_KM * Math.asin(Math.min(1, Math.sqrt(a)))
}

/** Share of a question's range, at either end, that counts as "at the edge". */
export const EDGE_SHARE = 0.01

/**
 * Keys of numeric answers lying at the edge of their allowed range (both bounds must be set). A bound of
 * zero does not count: none, no schooling or no livestock are genuine answers, not signs of a placeholder.
 */
export function edgeValues(questions: readonly Question[], answers: Record<string, unknown>): string[] {
  const out: string[] = []
  for (const q of questions) {
    if ((q.type !== 'number' && q.type !== 'whole') || q.min === undefined || q.max === undefined) continue
    const v = ownValue(answers, q.key)
    if (typeof v !== 'number') continue
    const margin = (q.max - q.min) * EDGE_SHARE
    if ((q.min !== 0 && v <= q.min + margin) || (q.max !== 0 && v >= q.max - margin)) out.push(q.key)
  }
  return out
}

export interface FlagInput {
  lat: number | null
  lon: number | null
  startedAt: string
  savedAt: string
  answers: Record<string, unknown>
}

/** The flags a visit earns on its own; the duplicate farm code flag needs the round and is added by the caller. */
export function intrinsicFlags(visit: FlagInput, village: { centreLat: number, centreLon: number } | undefined, questions: readonly Question[], settings: FlagSettings): VisitFlags {
  const flags: VisitFlags = {}
  if (village && visit.lat !== null && visit.lon !== null) {
    const km = haversineKm(visit.lat, visit.lon, village.centreLat, village.centreLon)
    if (km > settings.farRadiusKm) flags.farFromVillageKm = Math.round(km * 10) / 10
  }
  const edges = edgeValues(questions, visit.answers)
  if (edges.length) flags.edgeValues = edges
  const seconds = (Date.parse(visit.savedAt) - Date.parse(visit.startedAt)) / 1000
  if (seconds < settings.minInterviewSeconds) flags.tooFastSeconds = Math.max(0, Math.round(seconds))
  return flags
}

export const FLAG_LABELS: Record<keyof VisitFlags, string> = {
  duplicateFarmCode: 'Farm code used twice in this round',
  farFromVillageKm: 'GPS point far from the village',
  edgeValues: 'Answer at the edge of its range',
  tooFastSeconds: 'Interview saved very fast',
  farmInOtherVillage: 'Farm code registered in another village'
}
