import { defineStore } from 'pinia'
import { fieldDbName } from '~/utils/field-db'
import { lockVault } from '~/utils/field-keys'
import { fetchSetupAhead } from '~/utils/sync-engine'
import { TooSoonError, WrongPinError, clearErased, deviceStateOf, eraseLocalStore, isOpen, replacePin, setUpVault, unlockVault, vaultMeta, wasErased } from '~/utils/field-vault'

/** none: no PIN yet on this tablet · locked · open · erased: an admin revoked the tablet and its store is gone. */
export type VaultStatus = 'unknown' | 'none' | 'locked' | 'open' | 'erased'

const ACTIVITY = ['pointerdown', 'keydown', 'touchstart', 'wheel'] as const

/**
 * The lock of the tablet's encrypted store for the signed-in enumerator: set-up, unlock, lock after idle time,
 * forgotten PIN and revocation. The idle time is NUXT_PUBLIC_FIELD_IDLE_LOCK_MINUTES (default 5): long enough for
 * a pause in an interview, short enough that a tablet left on a table closes before someone else picks it up.
 */
export const useFieldVaultStore = defineStore('field-vault', () => {
  const status = ref<VaultStatus>('unknown')
  const failures = ref(0)
  const retryAt = ref(0)
  let userId: number | null = null
  let idleTimer: ReturnType<typeof setTimeout> | undefined
  // When this page registered the tablet: the revocation check right after it is skipped (see checkDevice).
  let registeredAt = 0

  const idleMs = () => Math.max(1, Number(useRuntimeConfig().public.fieldIdleLockMinutes) || 5) * 60_000

  function refresh(forUser: number | null) {
    userId = forUser
    if (forUser === null) {
      status.value = 'unknown'
      return
    }
    const meta = vaultMeta(forUser)
    if (!meta && wasErased(forUser)) {
      status.value = 'erased'
      return
    }
    failures.value = meta?.failures ?? 0
    retryAt.value = meta?.retryAt ?? 0
    status.value = !meta ? 'none' : isOpen(forUser) ? 'open' : 'locked'
    if (status.value === 'open') watchIdle()
    // A new tablet has nothing stored yet: its setup is fetched while the owner chooses the PIN.
    if (status.value === 'none' && navigator.onLine) fetchSetupAhead(fieldDbName(forUser))
  }

  function onActivity() {
    clearTimeout(idleTimer)
    idleTimer = setTimeout(lock, idleMs())
  }

  function watchIdle() {
    for (const name of ACTIVITY) window.addEventListener(name, onActivity, { passive: true })
    onActivity()
  }

  function stopIdle() {
    clearTimeout(idleTimer)
    for (const name of ACTIVITY) window.removeEventListener(name, onActivity)
  }

  function opened() {
    status.value = 'open'
    failures.value = 0
    retryAt.value = 0
    watchIdle()
    void useFieldSyncStore().syncNow()
  }

  async function setUp(pin: string) {
    if (userId === null) return
    await setUpVault(userId, pin)
    registeredAt = Date.now()
    opened()
  }

  /** Returns null when unlocked, otherwise what to say (wrong PIN, or wait). */
  async function unlock(pin: string): Promise<string | null> {
    if (userId === null) return null
    try {
      await unlockVault(userId, pin)
      opened()
      return null
    }
    catch (error) {
      if (error instanceof WrongPinError) {
        failures.value = error.failures
        retryAt.value = error.retryAt
        return 'That PIN is not right.'
      }
      if (error instanceof TooSoonError) {
        retryAt.value = error.retryAt
        return 'Wait until the time below before trying again.'
      }
      throw error
    }
  }

  function lock() {
    stopIdle()
    if (userId === null) return
    lockVault(userId)
    if (status.value === 'open') status.value = 'locked'
  }

  /** Forgotten PIN. Returns what to say when it cannot be done now; the store is never erased for it. */
  async function newPin(pin: string): Promise<string | null> {
    if (userId === null) return null
    try {
      await replacePin(userId, pin)
      opened()
      return null
    }
    catch (error) {
      const code = (error as { statusCode?: number }).statusCode
      if (code === 401 || code === 403) return 'Sign in again with your password first, then choose a new PIN.'
      if (code === 410) {
        await erase()
        return null
      }
      if (code === undefined) return 'The server cannot be reached. Connect to the internet to choose a new PIN; your visits stay on this tablet meanwhile.'
      return 'The server could not release this tablet\'s key. Try again, or ask your admin.'
    }
  }

  async function erase() {
    if (userId === null) return
    stopIdle()
    await eraseLocalStore(userId)
    status.value = 'erased'
  }

  /** After the owner read why the tablet is empty: set it up again with a new PIN. */
  function startAgain() {
    if (userId === null) return
    clearErased(userId)
    refresh(userId)
  }

  /** At every contact: a tablet an admin revoked erases its local copy (no PIN needed, nothing is read). */
  async function checkDevice(): Promise<boolean> {
    if (userId === null || !navigator.onLine) return false
    // The server registered this tablet a moment ago: the first pass need not ask again whether it was revoked
    // (one round trip less before a new tablet can start). Skipped once, and only within a minute of it.
    const fresh = Date.now() - registeredAt < 60_000
    registeredAt = 0
    if (fresh) return false
    if ((await deviceStateOf(userId)) !== 'revoked') return false
    await erase()
    return true
  }

  return { status, failures, retryAt, refresh, setUp, unlock, lock, newPin, checkDevice, erase, startAgain }
})
