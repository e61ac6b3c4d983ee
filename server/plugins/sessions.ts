import { sessionHooks } from '#imports'

// nuxt-auth-utils' own routes go through the session rows too: GET /api/_auth/session answers the user of a
// live session only (the cookie holds no user), and clearing the cookie (sign-out, DELETE /api/_auth/session)
// revokes the row, so a copy of the cookie taken before is refused from then on.
export default defineNitroPlugin(() => {
  sessionHooks.hook('fetch', async (session, event) => {
    const current = await currentSession(event)
    delete session.user
    delete session.signedInAt
    if (!current) return
    session.user = sessionUserOf(current.user)
    session.signedInAt = current.record.createdAt.toISOString()
  })
  sessionHooks.hook('clear', async (session) => {
    await revokeSessionByToken(session.secure?.token, 'signed_out')
  })
})
