import type { H3Event } from 'h3'
import type { PublishRequest } from '#shared/utils/modelling/request'
import { database } from '../db/connection'
import { funderOrganisationOf } from '#shared/utils/funders'
import { Op } from 'sequelize'
import { Organisation, Publication, Round, User, Village, settingsOf, type ModelRun } from '../db/models'
import type { PublishedContent } from '../db/models/publication'
import { funderHeadline, funderVillages } from './funder-view'
import type { SignedInUser } from './access'

/**
 * Publishes a finished run as the round's one publication, freezing what funders and tablets need.
 * A previous publication of the round is withdrawn in the same transaction; both steps are audited.
 */
export async function publishRun(event: H3Event, user: SignedInUser, run: ModelRun, request: PublishRequest) {
  const { round, content } = await contentToPublish(user, run, request)

  const publication = await database().transaction(async (transaction) => {
    const previous = await Publication.findOne({ where: { roundId: run.roundId, organisationId: user.organisationId, active: true }, transaction, lock: transaction.LOCK.UPDATE })
    if (previous) {
      await previous.update({ active: false, withdrawnAt: new Date() }, { transaction })
    }
    const created = await Publication.create({
      organisationId: user.organisationId,
      roundId: run.roundId,
      modelRunId: run.id,
      note: request.note,
      tabletAid: request.tabletAid,
      publishedBy: user.id,
      withdrawnAt: null,
      content
    }, { transaction })
    await round.update({ targetVisitsPerVillage: request.targetVisitsPerVillage }, { transaction })
    await audit(event, user, {
      action: previous ? 'publication.replace' : 'publication.publish',
      entityType: 'publication',
      entityId: created.id,
      details: { roundId: run.roundId, modelRunId: run.id, replaced: previous?.id ?? null, scenarios: content.scenarios.map(sc => sc.name), targetVisitsPerVillage: request.targetVisitsPerVillage }
    }, transaction)
    return created
  })
  await notifyPublished(round, publication)
  return publication
}

type ContentChoices = Pick<PublishRequest, 'targetRate' | 'scenarioNames' | 'targetVisitsPerVillage'>

/**
 * What publishing this run would freeze: only the scenarios the coordinator chose (the others are explorations
 * and never reach funders), the adoption target and the round's target of visits per village.
 */
async function contentToPublish(user: SignedInUser, run: ModelRun, request: ContentChoices): Promise<{ round: Round, content: PublishedContent }> {
  const results = run.results
  if (run.status !== 'done' || !results) throw createError({ statusCode: 409, message: 'Only a finished fit can be published.' })
  // Funders see one round's villages; a model over several rounds describes no one round.
  if (run.request.several) throw createError({ statusCode: 409, message: 'A model over several rounds is for analysis: publish a model of one round.' })
  if (!results.converged) throw createError({ statusCode: 409, message: 'This fit did not converge; it cannot be published.' })
  if (!results.villages) throw createError({ statusCode: 409, message: 'This fit has no village predictions (it was not clustered by village).' })
  const round = await Round.findOne({ where: { id: run.roundId, organisationId: user.organisationId } })
  if (!round) throw createError({ statusCode: 404, message: 'No such survey round.' })
  const unknown = request.scenarioNames.filter(name => !results.scenarios.some(s => s.name === name))
  if (unknown.length) throw createError({ statusCode: 400, message: `This fit has no scenario named “${unknown[0]}”.` })
  return {
    round,
    content: {
      link: results.link,
      plan: results.plan,
      coefficients: results.coefficients.map(c => ({ term: c.term, label: c.label, estimate: c.estimate })),
      overall: results.overall,
      villages: results.villages,
      scenarios: results.scenarios.filter(s => request.scenarioNames.includes(s.name)),
      farmsVisited: results.rows.used,
      targetRate: request.targetRate,
      targetVisits: request.targetVisitsPerVillage
    }
  }
}

/** The map, table and headline funders would see if this run were published with these choices; nothing is written. */
export async function publishPreview(user: SignedInUser, run: ModelRun, request: ContentChoices) {
  const { round, content } = await contentToPublish(user, run, request)
  const organisation = await Organisation.findByPk(user.organisationId)
  const minVisits = organisation ? settingsOf(organisation).minVisitsForFunders : 5
  const places = await Village.findAll({ where: { organisationId: user.organisationId, code: { [Op.in]: content.villages.map(v => v.village) } } })
  return {
    round: { round: round.name, technology: round.technology, season: round.season },
    minVisits,
    headline: funderHeadline(content, minVisits),
    villages: funderVillages(content, places, minVisits),
    scenarios: content.scenarios.map(s => s.name)
  }
}

export async function withdrawPublication(event: H3Event, user: SignedInUser, roundId: number) {
  return database().transaction(async (transaction) => {
    const current = await Publication.findOne({ where: { roundId, organisationId: user.organisationId, active: true }, transaction, lock: transaction.LOCK.UPDATE })
    if (!current) throw createError({ statusCode: 404, message: 'This round has no publication to withdraw.' })
    await current.update({ active: false, withdrawnAt: new Date() }, { transaction })
    await audit(event, user, { action: 'publication.withdraw', entityType: 'publication', entityId: current.id, details: { roundId } }, transaction)
    return current
  })
}

/** Tells the organisation's funders, by e-mail through the mail queue (a mail server that is down loses nothing). */
async function notifyPublished(round: Round, publication: Publication) {
  const [organisation, funders] = await Promise.all([
    Organisation.findByPk(publication.organisationId),
    User.findAll({ where: { organisationId: publication.organisationId, role: 'funder', active: true } })
  ])
  const link = `${serverConfig().PUBLIC_URL}/overview?round=${round.id}`
  const listed = organisation ? settingsOf(organisation).funderOrganisations : []
  for (const funder of funders.filter(f => funderOrganisationOf(f.email, listed))) {
    const mail = roundPublishedMail({ funderName: funder.name, organisationName: organisation?.name ?? '', roundName: round.name, link })
    await queueMail({ ...mail, to: funder.email, kind: 'round-published', organisationId: publication.organisationId, userId: funder.id })
  }
}
