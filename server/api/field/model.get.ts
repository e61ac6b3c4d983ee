import { z } from 'zod'
import { Publication } from '../../db/models'

const querySchema = z.object({ roundId: z.coerce.number().int().positive() })

// The published model for the tablet's planning aid: coefficients and the design plan only, and only when
// the coordinator switched the aid on for this round.
export default defineRoleHandler(['enumerator'], async (event, user) => {
  const { roundId } = await getValidatedQuery(event, validateWith(querySchema))
  const publication = await Publication.findOne({ where: { organisationId: user.organisationId, roundId, active: true } })
  if (!publication || !publication.tabletAid) return { roundId, model: null }
  const { link, plan, coefficients } = publication.content
  return { roundId, model: { publicationId: publication.id, link, plan, coefficients } }
})
