import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const body = await readValidatedBody(event, validateWith(questionnaireSaveSchema))
  return saveQuestionnaire(event, user, id, body.questions, body.checks, body.groups, languageTextsOf(body))
})
