import type { MapVillage } from '#shared/types/overview'
import { hiddenVillages, shownMean } from '#shared/utils/suppression'
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

/**
 * What funders may see of one publication: the villages to hide (shared/utils/suppression.ts: primary and
 * complementary suppression) and the round figures computed over the shown villages only, so no subtraction can
 * bring a hidden village back.
 */
export function funderFigures(content: FunderContent, minVisits: number) {
  const hidden = hiddenVillages(content.villages, minVisits)
  const shown = content.villages.filter(v => !hidden.has(v.village))
  const visitsOf = new Map(shown.map(v => [v.village, v.n]))
  const complete = hidden.size === 0
  return {
    hidden,
    shown,
    farmsVisited: shown.reduce((s, v) => s + v.n, 0),
    observedRate: complete ? content.overall.observedRate : shownMean(shown.map(v => ({ n: v.n, value: v.observedRate }))),
    predicted: complete
      ? { estimate: content.overall.estimate as number | null, ciLow: content.overall.ciLow, ciHigh: content.overall.ciHigh }
      : { estimate: shownMean(shown.map(v => ({ n: v.n, value: v.estimate }))), ciLow: null, ciHigh: null },
    scenarios: content.scenarios.map(s => ({
      name: s.name,
      description: s.description,
      change: complete
        ? s.overall.estimate as number | null
        : shownMean(s.villages.filter(sv => visitsOf.has(sv.village)).map(sv => ({ n: visitsOf.get(sv.village)!, value: sv.estimate })))
    }))
  }
}

/** The map's villages; hidden ones (too few visits, or hidden to protect another) carry no figure at all. */
export function funderVillages(content: FunderContent, places: readonly FunderPlace[], minVisits: number): MapVillage[] {
  const byCode = new Map(places.map(p => [p.code, p]))
  const target = content.targetVisits ?? null
  const hidden = hiddenVillages(content.villages, minVisits)
  return content.villages.flatMap((v): MapVillage[] => {
    const place = byCode.get(v.village)
    if (!place) return []
    const suppressed = hidden.has(v.village)
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

/** The headline figures above the map, over the shown villages only when any is hidden. */
export function funderHeadline(content: FunderContent, minVisits: number) {
  const figures = funderFigures(content, minVisits)
  return {
    farmsVisited: figures.farmsVisited,
    observedRate: figures.observedRate,
    predicted: figures.predicted,
    villages: content.villages.length,
    suppressedVillages: figures.hidden.size,
    targetRate: content.targetRate,
    villagesBelowTarget: figures.shown.filter(v => v.estimate < content.targetRate).length,
    targetVisits: content.targetVisits ?? null,
    villagesBelowVisitTarget: content.targetVisits ? content.villages.filter(v => v.n < content.targetVisits!).length : 0,
    scenarios: figures.scenarios
  }
}
