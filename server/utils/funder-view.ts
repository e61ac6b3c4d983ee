import type { MapVillage } from '#shared/types/overview'
import type { PublishedContent } from '../db/models/publication'

// What a funder sees of a publication, built from its frozen content and the village records only. The publish
// preview calls the same functions with the content about to be frozen, so the coordinator sees exactly this.

export interface FunderPlace {
  code: string
  name: string
  centreLat: number
  centreLon: number
  boundary: unknown
}

type FunderContent = Pick<PublishedContent, 'villages' | 'scenarios' | 'targetVisits' | 'overall' | 'farmsVisited' | 'targetRate'>

/** The map's villages; those with fewer visits than the organisation's minimum are suppressed (no figure at all). */
export function funderVillages(content: FunderContent, places: readonly FunderPlace[], minVisits: number): MapVillage[] {
  const byCode = new Map(places.map(p => [p.code, p]))
  const target = content.targetVisits ?? null
  return content.villages.flatMap((v): MapVillage[] => {
    const place = byCode.get(v.village)
    if (!place) return []
    const suppressed = v.n < minVisits
    return [{
      code: place.code,
      name: place.name,
      lat: place.centreLat,
      lon: place.centreLon,
      boundary: (place.boundary as GeoJSON.Geometry | null) ?? null,
      visits: suppressed ? null : v.n,
      suppressed,
      belowVisitTarget: target !== null && v.n < target,
      observedRate: suppressed ? null : v.observedRate,
      predicted: suppressed ? null : { estimate: v.estimate, ciLow: v.ciLow, ciHigh: v.ciHigh },
      scenarios: suppressed
        ? {}
        : Object.fromEntries(content.scenarios.flatMap(s => s.villages.filter(sv => sv.village === v.village).map(sv => [s.name, sv.scenario])))
    }]
  })
}

/** The headline figures above the map. */
export function funderHeadline(content: FunderContent, minVisits: number) {
  const shown = content.villages.filter(v => v.n >= minVisits)
  return {
    farmsVisited: content.farmsVisited,
    observedRate: content.overall.observedRate,
    predicted: { estimate: content.overall.estimate, ciLow: content.overall.ciLow, ciHigh: content.overall.ciHigh },
    villages: content.villages.length,
    suppressedVillages: content.villages.length - shown.length,
    targetRate: content.targetRate,
    villagesBelowTarget: shown.filter(v => v.estimate < content.targetRate).length,
    targetVisits: content.targetVisits ?? null,
    villagesBelowVisitTarget: content.targetVisits ? content.villages.filter(v => v.n < content.targetVisits!).length : 0,
    scenarios: content.scenarios.map(s => ({ name: s.name, description: s.description, change: s.overall.estimate }))
  }
}
