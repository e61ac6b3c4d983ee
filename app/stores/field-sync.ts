import { defineStore } from 'pinia'
import { type SyncProgress, type SyncSummary, OfflineError, ServerBusyError, SessionExpiredError, syncOnce } from '~/utils/sync-engine'
import { fieldDb } from '~/utils/field-db'

const PERIOD_MS = 60_000
const MAX_BACKOFF_MS = 5 * 60_000

/**
 * The tablet's sync status and schedule: on app start, when the device comes back online, every minute while
 * online, and on the button. After a failure it waits 5 s, 10 s, 20 s … up to 5 minutes before trying again.
 * A busy server (503/429) is not an error: the tablet says so and waits at least the server's Retry-After.
 */
export const useFieldSyncStore = defineStore('field-sync', () => {
  const running = ref(false)
  const progress = ref<SyncProgress | null>(null)
  const lastSyncAt = ref<string | null>(null)
  const lastSummary = ref<SyncSummary | null>(null)
  const error = ref<string | null>(null)
  const busy = ref(false)
  const needsSignIn = ref(false)
  const online = ref(true)
  let userId: number | null = null
  let failures = 0
  let timer: ReturnType<typeof setTimeout> | undefined

  function schedule(ms: number) {
    clearTimeout(timer)
    timer = setTimeout(() => void syncNow(), ms)
  }

  async function syncNow(): Promise<void> {
    if (userId === null || running.value) return
    if (!navigator.onLine) {
      online.value = false
      return
    }
    // Every contact first asks whether an admin revoked this tablet (it then erases its store), locked or not.
    const vault = useFieldVaultStore()
    if (await vault.checkDevice()) {
      stop()
      return
    }
    if (needsSignIn.value) return
    // A locked store cannot be read: the queue waits for the PIN; the revocation check above still runs each period.
    if (vault.status !== 'open') {
      schedule(PERIOD_MS)
      return
    }
    running.value = true
    error.value = null
    busy.value = false
    try {
      const db = fieldDb(userId)
      lastSummary.value = await syncOnce(db, (p) => {
        progress.value = p
      })
      lastSyncAt.value = new Date().toISOString()
      failures = 0
      // The connection may have dropped while this pass finished: the device's own flag has the last word.
      online.value = navigator.onLine
      schedule(PERIOD_MS)
    }
    catch (e) {
      if (e instanceof SessionExpiredError) {
        // The queue stays on the device untouched; nothing more is tried until the enumerator signs in again.
        needsSignIn.value = true
        error.value = e.message
      }
      else if (e instanceof ServerBusyError) {
        // Waits the longer of the server's Retry-After and the backoff, with jitter so tablets spread out.
        busy.value = true
        online.value = true
        failures++
        const backoff = Math.min(MAX_BACKOFF_MS, 5_000 * 2 ** (failures - 1))
        schedule(Math.max(e.retryAfterMs, backoff) * (1 + Math.random() * 0.3))
      }
      else {
        online.value = !(e instanceof OfflineError)
        error.value = e instanceof Error ? e.message : String(e)
        failures++
        schedule(Math.min(MAX_BACKOFF_MS, 5_000 * 2 ** (failures - 1)))
      }
    }
    finally {
      running.value = false
      progress.value = null
    }
  }

  async function start(forUser: number) {
    if (userId === forUser) return
    userId = forUser
    needsSignIn.value = false
    // Locked, the cached time cannot be read; the first pass after the unlock sets it.
    lastSyncAt.value = ((await fieldDb(forUser).cache.get('lastSyncAt').catch(() => undefined))?.value as string | undefined) ?? null
    online.value = navigator.onLine
    window.addEventListener('online', () => {
      online.value = true
      failures = 0
      void syncNow()
    })
    window.addEventListener('offline', () => {
      online.value = false
    })
    void syncNow()
  }

  function stop() {
    clearTimeout(timer)
    userId = null
  }

  return { running, progress, lastSyncAt, lastSummary, error, busy, needsSignIn, online, syncNow, start, stop }
})
