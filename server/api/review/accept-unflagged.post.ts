// Accepts every unflagged visit still to review in a round (within the filters), once the count is confirmed.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const body = await readValidatedBody(event, validateWith(bulkAcceptSchema))
  return acceptUnflagged(event, user, body)
})
