// Public: uses an invitation or reset link once to set a password. Rate-limited per address.
export default definePublicHandler(async (event) => {
  const input = await readValidatedBody(event, validateWith(setPasswordSchema))
  return setPasswordWithLink(event, input)
})
