export default defineEventHandler(async (event) => {
  // The health route reports on the database itself, so it does not wait here.
  if (!event.path.startsWith('/api/') || event.path.split('?')[0] === '/api/health') return
  try {
    await databaseReady()
  }
  catch {
    setResponseHeader(event, 'Retry-After', retryAfterSeconds())
    throw createError({ statusCode: 503, message: 'The database is not available yet. Try again in a moment.' })
  }
})
