import { z } from 'zod'

const querySchema = z.object({ code: farmCodeSchema })

// Where one farm's personal data lives (visits, photos, rounds, tablets), before an erasure is confirmed.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { code } = await getValidatedQuery(event, validateWith(querySchema))
  return farmFootprint(user.organisationId, code)
})
