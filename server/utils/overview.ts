import { Op } from 'sequelize'
import type { MapVillage } from '#shared/types/overview'
import { funderOrganisationOf } from '#shared/utils/funders'
import { hiddenVillages, shownMean } from '#shared/utils/suppression'
import { Organisation, Publication, Round, Village, settingsOf } from '../db/models'
import type { PublishedContent } from '../db/models/publication'
import type { SignedInUser } from './access'

// Everything here is built from frozen publications and village records: no visit, answer, photo, GPS point
// or enumerator ever passes through, so a funder cannot reach household data by any route that uses it.

/**
 * The organisation's small-cell threshold, after checking that a funder's e-mail domain is one of the funder
 * organisations the admins listed in the settings (an empty list shares with no funder).
 */
async function minimumVisits(user: SignedInUser): Promise<number> {
  const organisation = await Organisation.findByPk(user.organisationId)
  const settings = organisation ? settingsOf(organisation) : null
  if (user.role === 'funder' && !funderOrganisationOf(user.email, settings?.funderOrganisations ?? [])) {
    throw createError({ statusCode: 403, message: 'Your organisation is not on this programme\'s list of funders. Ask its administrator to add it.' })
  }
  return settings?.minVisitsForFunders ?? 5
}

/**
 * What funders may see of one publication: the villages to hide (shared/utils/suppression.ts) and the round
 * figures computed over the shown villages only, so no subtraction can bring a hidden village back.
 */
export function funderFigures(content: PublishedContent, minVisits: number) {
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

export async function publishedRounds(user: SignedInUser) {
  const publications = await Publication.findAll({ where: { organisationId: user.organisationId, active: true }, order: [['createdAt', 'DESC']] })
  const rounds = await Round.findAll({ where: { id: { [Op.in]: publications.map(p => p.roundId) } } })
  const minVisits = await minimumVisits(user)
  return publications.map((p) => {
    const round = rounds.find(r => r.id === p.roundId)
    const figures = funderFigures(p.content, minVisits)
    return {
      roundId: p.roundId,
      round: round?.name ?? '',
      technology: round?.technology ?? '',
      season: round?.season ?? '',
      note: p.note,
      publishedAt: p.createdAt.toISOString(),
      farmsVisited: figures.farmsVisited,
      observedRate: figures.observedRate,
      predicted: figures.predicted,
      villages: p.content.villages.length,
      suppressedVillages: figures.hidden.size,
      targetRate: p.content.targetRate,
      villagesBelowTarget: figures.shown.filter(v => v.estimate < p.content.targetRate).length,
      scenarios: figures.scenarios
    }
  })
}

/** The map of one published round, villages below the minimum number of visits suppressed. */
export async function publishedMap(user: SignedInUser, roundId: number): Promise<{ villages: MapVillage[], scenarios: string[], previous: { round: string, predicted: number } | null }> {
  const publication = await Publication.findOne({ where: { organisationId: user.organisationId, roundId, active: true } })
  if (!publication) throw createError({ statusCode: 404, message: 'This round has no published results.' })
  const minVisits = await minimumVisits(user)
  const places = await Village.findAll({ where: { organisationId: user.organisationId, code: { [Op.in]: publication.content.villages.map(v => v.village) } } })
  const hidden = hiddenVillages(publication.content.villages, minVisits)
  const villages = publication.content.villages.flatMap((v): MapVillage[] => {
    const place = places.find(p => p.code === v.village)
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
      observedRate: suppressed ? null : v.observedRate,
      predicted: suppressed ? null : { estimate: v.estimate, ciLow: v.ciLow, ciHigh: v.ciHigh },
      scenarios: suppressed
        ? {}
        : Object.fromEntries(publication.content.scenarios.flatMap(s => s.villages.filter(sv => sv.village === v.village).map(sv => [s.name, sv.scenario])))
    }]
  })
  return { villages, scenarios: publication.content.scenarios.map(s => s.name), previous: await previousRound(user.organisationId, roundId, minVisits) }
}

/** The latest other published round of the same technology, for the change between rounds. */
async function previousRound(organisationId: number, roundId: number, minVisits: number) {
  const round = await Round.findByPk(roundId)
  if (!round) return null
  const siblings = await Round.findAll({ where: { organisationId, technology: round.technology, id: { [Op.ne]: roundId } } })
  const earlier = await Publication.findOne({
    where: { organisationId, active: true, roundId: { [Op.in]: siblings.map(s => s.id) } },
    order: [['createdAt', 'DESC']]
  })
  if (!earlier) return null
  // The earlier round's figure over its own shown villages: its full-round figure could reveal its hidden ones.
  const predicted = funderFigures(earlier.content, minVisits).predicted.estimate
  if (predicted === null) return null
  return { round: siblings.find(s => s.id === earlier.roundId)?.name ?? '', predicted }
}
