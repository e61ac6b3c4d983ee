// Starts reading a sync batch's body as soon as the request arrives, before the session and role checks
// (which wait on the database). A tablet that loses its connection right after sending still gets its batch
// stored: the bytes that reached the server are read before the closed socket would discard them. The route
// reads the same buffered body later (h3 keeps it on the request). Only declared lengths within the limit.
export default defineEventHandler(async (event) => {
  if (event.method !== 'POST' || event.path.split('?')[0] !== '/api/sync/visits') return
  const length = Number(getHeader(event, 'content-length') ?? 0)
  if (!(length > 0 && length <= SYNC_BODY_MAX_BYTES) || !await mayCarryBody(event)) return
  // Errors surface when the route awaits the same promise; this copy must not count as unhandled.
  readRawBody(event, false).catch(() => {})
})
