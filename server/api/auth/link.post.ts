// Public: checks an invitation or reset link before its page asks for a password. Rate-limited per address.
export default definePublicHandler(async (event) => {
  const input = await readValidatedBody(event, validateWith(tokenCheckSchema))
  return checkLink(event, input)
})
