import { z } from 'zod'
import { Publication } from '../../db/models'

const querySchema = z.object({ roundId: z.coerce.number().int().positive() })

// The publication history of a round, for the coordinator: which run, when, and whether it still stands.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { roundId } = await getValidatedQuery(event, validateWith(querySchema))
  const rows = await Publication.findAll({ where: { organisationId: user.organisationId, roundId }, order: [['id', 'DESC']] })
  return rows.map(p => ({ id: p.id, modelRunId: p.modelRunId, note: p.note, active: p.active, tabletAid: p.tabletAid, publishedAt: p.createdAt.toISOString(), withdrawnAt: p.withdrawnAt?.toISOString() ?? null, scenarioNames: p.content.scenarios.map(sc => sc.name), targetRate: p.content.targetRate, targetVisits: p.content.targetVisits ?? null }))
})
