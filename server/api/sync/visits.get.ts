import { z } from 'zod'

const querySchema = z.object({ since: z.iso.datetime({ offset: true }).optional() })

// Server → device: the state of this enumerator's visits (review state, reason, version), newest change first.
// Compressed when the tablet accepts it: after a review the corrected visits come back whole.
export default defineRoleHandler(['enumerator'], async (event, user) => {
  const query = await getValidatedQuery(event, validateWith(querySchema))
  return compressedJson(event, await visitStatesFor(user, query.since ? new Date(query.since) : undefined))
})
