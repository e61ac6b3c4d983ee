// Deny by default: an /api route answers only to a live session unless it is public (server/utils/public-api.ts).
// Each protected route then checks the role itself through defineRoleHandler.
export default defineEventHandler(async (event) => {
  if (!event.path.startsWith('/api/') || isPublicApi(event)) return
  // The same lookup requireRole uses (kept for the request), so a revoked or expired session stops here.
  if (!await currentSession(event)) throw await sessionRefusal(event)
})
