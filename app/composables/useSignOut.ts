export function useSignOut() {
  const { fetch: refreshSession } = useUserSession()
  const busy = ref(false)

  async function signOut() {
    busy.value = true
    try {
      await $fetch('/api/auth/signout', { method: 'POST' })
    }
    finally {
      // Whatever the server said, the local copy of the session must go.
      await refreshSession()
      busy.value = false
      await navigateTo('/signin')
    }
  }

  return { signOut, busy }
}
