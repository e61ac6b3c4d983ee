import { fieldDb } from '~/utils/field-db'
import { lockVault } from '~/utils/field-keys'

/** Visits on this tablet that the server does not have in their last form (counted by the clear state index). */
async function unsyncedOnTablet(userId: number): Promise<number> {
  const db = fieldDb(userId)
  return (await db.visits.count()) - (await db.visits.where('state').equals('synced').count())
}

export function useSignOut() {
  const { user, fetch: refreshSession } = useUserSession()
  const { ask } = useConfirm()
  const busy = ref(false)

  async function signOut() {
    const me = user.value
    if (me?.role === 'enumerator') {
      const unsynced = await unsyncedOnTablet(me.id).catch(() => 0)
      if (unsynced > 0 && !await ask({
        title: 'Sign out with visits not yet on the server?',
        points: [
          `${unsynced === 1 ? '1 visit' : `${unsynced} visits`} on this tablet ${unsynced === 1 ? 'has' : 'have'} not reached the server in ${unsynced === 1 ? 'its' : 'their'} last form.`,
          'They stay on this tablet, encrypted: nobody can read them without your PIN.',
          'Sign in again on this tablet and sync to send them.'
        ],
        confirmLabel: 'Sign out and keep them',
        cancelLabel: 'Stay signed in'
      })) return
      // The data key leaves memory; the store stays, sealed, for the next sign-in.
      lockVault(me.id)
      useFieldVaultStore().lock()
    }
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
