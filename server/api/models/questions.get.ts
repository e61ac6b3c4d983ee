import { z } from 'zod'
import { modelableQuestions } from '#shared/utils/modelling/questions'
import { OUTCOME_KEY } from '#shared/utils/schemas/questionnaire'

const querySchema = z.object({ roundId: z.coerce.number().int().positive() })

// The questions a model of this round can use, with the counts the builder shows.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { roundId } = await getValidatedQuery(event, validateWith(querySchema))
  const context = await roundContext(roundId, user.organisationId)
  const [counts, asking] = await Promise.all([visitCounts(context.round.id), askingCounts(context.round.id, user.organisationId, context.questions)])
  return {
    round: { id: context.round.id, name: context.round.name, technology: context.round.technology },
    outcome: context.questions.find(q => q.key === OUTCOME_KEY) ?? null,
    questions: modelableQuestions(context.questions, OUTCOME_KEY),
    accepted: counts.accepted,
    /** Conditional questions: answered and not-asked counts among the accepted visits. */
    asking,
    excluded: counts.excluded
  }
})
