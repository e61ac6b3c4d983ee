export default definePublicHandler(async (event) => {
  const input = await readValidatedBody(event, validateWith(signInSchema))
  return signIn(event, input)
})
