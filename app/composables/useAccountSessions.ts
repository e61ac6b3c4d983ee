import type { ActiveSession } from '#shared/types/sessions'

/** The signed-in person's open sessions, and ending one or all of them ("sign out everywhere"). */
export function useAccountSessions() {
  const { fetch: refreshSession } = useUserSession()
  const { data, error, refresh } = useFetch<{ items: ActiveSession[] }>('/api/me/sessions', { key: 'account-sessions' })
  const busy = ref<number | 'all' | null>(null)
  const notice = ref('')
  const actionError = ref('')

  async function act(key: number | 'all', action: () => Promise<unknown>, done: string) {
    busy.value = key
    notice.value = ''
    actionError.value = ''
    try {
      await action()
      notice.value = done
    }
    catch (caught) {
      actionError.value = problemOf(caught).message
    }
    finally {
      busy.value = null
    }
  }

  async function endSession(session: ActiveSession) {
    if (session.current) return endEverywhere()
    await act(session.id, () => $fetch(`/api/me/sessions/${session.id}`, { method: 'DELETE' }), `${session.device} is signed out.`)
    await refresh()
  }

  async function endEverywhere() {
    await act('all', () => $fetch('/api/me/sessions', { method: 'DELETE' }), 'You are signed out everywhere.')
    await refreshSession()
    await navigateTo('/signin')
  }

  return { sessions: computed(() => data.value?.items ?? []), error, busy, notice, actionError, endSession, endEverywhere }
}
