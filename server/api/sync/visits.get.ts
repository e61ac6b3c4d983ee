import { z } from 'zod'

const querySchema = z.object({ since: z.iso.datetime({ offset: true }).optional() })

// Server → device: the state of this enumerator's visits (review state, reason, version), newest change first.
export default defineRoleHandler(['enumerator'], async (event, user) => {
  const query = await getValidatedQuery(event, validateWith(querySchema))
  return visitStatesFor(user, query.since ? new Date(query.since) : undefined)
})
