import { z } from 'zod'
import { Op } from 'sequelize'
import { ModelRun } from '../../db/models'

const querySchema = z.object({
  ids: z.string().regex(/^\d+(,\d+){1,9}$/, 'Give 2 to 10 run ids separated by commas').transform(s => [...new Set(s.split(',').map(Number))])
})

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { ids } = await getValidatedQuery(event, validateWith(querySchema))
  const runs = await ModelRun.findAll({ where: { id: { [Op.in]: ids }, organisationId: user.organisationId }, order: [['id', 'ASC']] })
  if (runs.length !== ids.length) throw createError({ statusCode: 404, message: 'One of these model runs does not exist.' })
  return compareRuns(runs)
})
