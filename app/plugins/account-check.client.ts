// An open page of a person who has been deactivated signs them out with a message, instead of failing request by
// request. The check reads /api/me (which checks the active flag in the database) every half minute while the page
// is visible, and whenever the tab comes back into view. No network: nothing to learn, nothing happens.
const EVERY_MS = 30_000

export default defineNuxtPlugin({
  name: 'furrowcast:account-check',
  setup() {
    const { loggedIn } = useUserSession()
    let checking = false

    async function check() {
      if (!loggedIn.value || checking || document.visibilityState !== 'visible') return
      checking = true
      try {
        const answer = await $fetch.raw('/api/me', { ignoreResponseError: true }).catch(() => null)
        const body = answer?._data as { data?: { reason?: string } } | undefined
        if (answer?.status === 401 && body?.data?.reason === 'deactivated') {
          // The server has already ended the session; a full load of the sign-in page drops what this page still holds.
          window.location.replace('/signin?done=deactivated')
        }
      }
      finally {
        checking = false
      }
    }

    setInterval(check, EVERY_MS)
    document.addEventListener('visibilitychange', check)
    window.addEventListener('focus', check)
  }
})
