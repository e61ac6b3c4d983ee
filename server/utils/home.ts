import { Op, col, fn } from 'sequelize'
import type { AdminHome, CoordinatorHome, FunderHome } from '#shared/types/home'
import { funderOrganisationOf } from '#shared/utils/funders'
import { AuditEntry, ModelRun, Publication, Round, User, Visit, settingsOf } from '../db/models'
import type { SignedInUser } from './access'

// The home pages' figures. Each is a handful of grouped counts, so the home page stays quick on a large round.

export async function coordinatorHome(user: SignedInUser): Promise<CoordinatorHome> {
  const organisationId = user.organisationId
  const rounds = await Round.findAll({ where: { organisationId }, order: [['id', 'DESC']] })
  const [states, runs, publications] = await Promise.all([
    Visit.findAll({
      where: { organisationId },
      attributes: ['roundId', 'reviewState', [fn('COUNT', col('id')), 'n']],
      group: ['roundId', 'reviewState'],
      raw: true
    }) as unknown as Promise<Array<{ roundId: number, reviewState: string, n: number | string }>>,
    ModelRun.findAll({ where: { organisationId }, order: [['id', 'DESC']], limit: 6 }),
    Publication.findAll({ where: { organisationId, active: true }, order: [['createdAt', 'DESC']] })
  ])
  const count = (roundId: number, state?: string) => states
    .filter(s => s.roundId === roundId && (state === undefined || s.reviewState === state))
    .reduce((sum, s) => sum + Number(s.n), 0)
  const nameOf = (roundId: number) => rounds.find(r => r.id === roundId)?.name ?? ''
  return {
    rounds: rounds.filter(r => r.status !== 'closed').map(r => ({
      id: r.id,
      name: r.name,
      technology: r.technology,
      season: r.season,
      status: r.status,
      visits: count(r.id),
      toReview: count(r.id, 'received'),
      accepted: count(r.id, 'accepted'),
      sentBack: count(r.id, 'sent_back')
    })),
    recentFits: runs.map(run => ({
      id: run.id,
      roundId: run.roundId,
      round: nameOf(run.roundId),
      link: run.spec.link ?? 'probit',
      status: run.status,
      used: run.results?.rows.used ?? null,
      covariates: run.spec.covariates?.length ?? 0,
      createdAt: run.createdAt.toISOString(),
      published: publications.some(p => p.modelRunId === run.id)
    })),
    published: publications.map(p => ({
      roundId: p.roundId,
      round: nameOf(p.roundId),
      modelRunId: p.modelRunId,
      publishedAt: p.createdAt.toISOString(),
      estimate: p.content.overall.estimate,
      villages: p.content.villages.length,
      tabletAid: p.tabletAid
    }))
  }
}

/** The funder's own organisation and the published rounds shared with it (none when its domain is not listed). */
export async function funderHome(user: SignedInUser): Promise<FunderHome> {
  const listed = funderOrganisationOf(user.email, settingsOf(user.organisation).funderOrganisations)
  if (!listed) return { funderOrganisation: null, rounds: [] }
  const rounds = await publishedRounds(user)
  return {
    funderOrganisation: listed.name,
    rounds: rounds.map(r => ({
      roundId: r.roundId,
      round: r.round,
      technology: r.technology,
      season: r.season,
      publishedAt: r.publishedAt,
      farmsVisited: r.farmsVisited,
      villages: r.villages - r.suppressedVillages,
      predicted: r.predicted.estimate,
      ciLow: r.predicted.ciLow,
      ciHigh: r.predicted.ciHigh,
      observedRate: r.observedRate,
      targetRate: r.targetRate,
      villagesBelowTarget: r.villagesBelowTarget
    }))
  }
}

export async function adminHome(user: SignedInUser): Promise<AdminHome> {
  const organisationId = user.organisationId
  const [people, invitationsOpen, recent] = await Promise.all([
    User.findAll({ where: { organisationId }, attributes: ['role', 'active', [fn('COUNT', col('id')), 'n']], group: ['role', 'active'], raw: true }) as unknown as Promise<Array<{ role: string, active: number | boolean, n: number | string }>>,
    User.count({ where: { organisationId, passwordHash: null, invitedAt: { [Op.ne]: null } } }),
    AuditEntry.findAll({ where: { organisationId }, order: [['id', 'DESC']], limit: 5 })
  ])
  const roles = ['admin', 'coordinator', 'enumerator', 'funder']
  return {
    people: roles.map(role => ({
      role,
      active: people.filter(p => p.role === role && Boolean(p.active)).reduce((s, p) => s + Number(p.n), 0),
      inactive: people.filter(p => p.role === role && !p.active).reduce((s, p) => s + Number(p.n), 0)
    })),
    invitationsOpen,
    funderOrganisations: settingsOf(user.organisation).funderOrganisations.length,
    recentActivity: recent.map(e => ({ id: Number(e.id), action: e.action, actor: e.actorEmail, at: e.createdAt.toISOString() }))
  }
}
