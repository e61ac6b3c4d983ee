// Public: the same answer whether or not the address has an account. Rate-limited per address.
export default definePublicHandler(async (event) => {
  const input = await readValidatedBody(event, validateWith(forgotSchema))
  return requestPasswordReset(event, input)
})
