// With no network the session cannot be read from the server. For navigation only, the app then uses the
// last user it saw signed in on this device, so an enumerator can open the tablet pages offline; every
// server route still checks the real session, and the sync asks for a new sign-in if that has ended.
const KEY = 'furrowcast:last-user'

export default defineNuxtPlugin({
  name: 'furrowcast:offline-session',
  async setup() {
    const { session, user } = useUserSession()
    if (user.value) {
      localStorage.setItem(KEY, JSON.stringify(user.value))
    }
    else {
      const reachable = await fetch('/api/health', { cache: 'no-store' }).then(() => true, () => false)
      const cached = localStorage.getItem(KEY)
      if (!reachable && cached) session.value = { user: JSON.parse(cached), signedInAt: '', offline: true } as unknown as typeof session.value
    }
    watch(user, (u) => {
      if (u && !(session.value as { offline?: boolean } | null)?.offline) localStorage.setItem(KEY, JSON.stringify(u))
      if (!u) localStorage.removeItem(KEY)
    })
  }
})
