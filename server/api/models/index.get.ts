import { z } from 'zod'
import { ModelRun, Publication } from '../../db/models'

const querySchema = z.object({ roundId: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { roundId } = await getValidatedQuery(event, validateWith(querySchema))
  const runs = await ModelRun.findAll({ where: { organisationId: user.organisationId, roundId }, order: [['id', 'DESC']], limit: 200 })
  const published = await Publication.findOne({ where: { organisationId: user.organisationId, roundId, active: true }, attributes: ['modelRunId'] })
  return runs.map(run => ({ ...runSummary(run), published: run.id === published?.modelRunId }))
})
