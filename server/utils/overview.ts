import { Op } from 'sequelize'
import type { MapVillage } from '#shared/types/overview'
import { funderFigures, funderHeadline, funderVillages } from './funder-view'
import { funderOrganisationOf } from '#shared/utils/funders'
import { Organisation, Publication, Round, Village, settingsOf } from '../db/models'
import type { SignedInUser } from './access'

// Everything here is built from frozen publications and village records: no visit, answer, photo, GPS point
// or enumerator ever passes through, so a funder cannot reach household data by any route that uses it.

/**
 * The organisation's small-cell threshold, after checking that a funder's e-mail domain is one of the funder
 * organisations the admins listed in the settings (an empty list shares with no funder).
 */
export async function minimumVisits(user: SignedInUser): Promise<number> {
  const organisation = await Organisation.findByPk(user.organisationId)
  const settings = organisation ? settingsOf(organisation) : null
  if (user.role === 'funder' && !funderOrganisationOf(user.email, settings?.funderOrganisations ?? [])) {
    throw createError({ statusCode: 403, message: 'Your organisation is not on this programme\'s list of funders. Ask its administrator to add it.' })
  }
  return settings?.minVisitsForFunders ?? 5
}

export async function publishedRounds(user: SignedInUser) {
  const publications = await Publication.findAll({ where: { organisationId: user.organisationId, active: true }, order: [['createdAt', 'DESC']] })
  const rounds = await Round.findAll({ where: { id: { [Op.in]: publications.map(p => p.roundId) } } })
  const minVisits = await minimumVisits(user)
  return publications.map((p) => {
    const round = rounds.find(r => r.id === p.roundId)
    return {
      roundId: p.roundId,
      round: round?.name ?? '',
      technology: round?.technology ?? '',
      season: round?.season ?? '',
      note: p.note,
      publishedAt: p.createdAt.toISOString(),
      ...funderHeadline(p.content, minVisits)
    }
  })
}

/** The map of one published round, villages below the minimum number of visits suppressed. */
export async function publishedMap(user: SignedInUser, roundId: number): Promise<{ villages: MapVillage[], scenarios: string[], previous: { round: string, predicted: number } | null }> {
  const publication = await Publication.findOne({ where: { organisationId: user.organisationId, roundId, active: true } })
  if (!publication) throw createError({ statusCode: 404, message: 'This round has no published results.' })
  const minVisits = await minimumVisits(user)
  const places = await Village.findAll({ where: { organisationId: user.organisationId, code: { [Op.in]: publication.content.villages.map(v => v.village) } } })
  const villages = funderVillages(publication.content, places, minVisits)
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
