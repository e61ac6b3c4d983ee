import { z } from 'zod'
import { modelableQuestions } from '#shared/utils/modelling/questions'
import { OUTCOME_KEY } from '#shared/utils/schemas/questionnaire'

const querySchema = z.object({ roundId: z.coerce.number().int().positive() })

// The questions a model of this round can use, with the counts the builder shows.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { roundId } = await getValidatedQuery(event, validateWith(querySchema))
  const data = await modelDataForRound(roundId, user.organisationId)
  return {
    round: { id: data.round.id, name: data.round.name, technology: data.round.technology },
    outcome: data.questions.find(q => q.key === OUTCOME_KEY) ?? null,
    questions: modelableQuestions(data.questions, OUTCOME_KEY),
    accepted: data.rows.length,
    excluded: data.excluded
  }
})
