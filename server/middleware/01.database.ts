export default defineEventHandler(async (event) => {
  if (!event.path.startsWith('/api/')) return
  try {
    await databaseReady()
  }
  catch {
    throw createError({ statusCode: 503, message: 'The database is not available yet. Try again in a moment.' })
  }
})
