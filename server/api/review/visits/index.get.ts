export default defineRoleHandler(['coordinator'], async (event, user) => {
  const query = await getValidatedQuery(event, validateWith(reviewQuerySchema))
  return listReviewVisits(user.organisationId, query)
})
