import type { H3Event } from 'h3'

// A GET of a run still fitting may ask to wait for its end (`?wait=`), so the coordinator's screen shows the results
// as soon as they are stored instead of at its next poll. The fit runs in this process (fitAndStore announces its end
// here); a run fitted by another app server of a cluster is seen by reading the row again every RECHECK_MS.

/** How often a waiting GET reads the run again. */
export const RECHECK_MS = 1000

const waiters = new Map<number, Set<() => void>>()

/** Wakes the requests waiting for this run: called once its end (results or failure) is stored. */
export function announceRunEnd(id: number): void {
  const waiting = waiters.get(id)
  waiters.delete(id)
  waiting?.forEach(wake => wake())
}

/** Resolves when this process announces the run's end, or after `ms`, whichever comes first. */
export function runEndOrTimeout(id: number, ms: number): Promise<void> {
  return new Promise((resolve) => {
    const set = waiters.get(id) ?? new Set<() => void>()
    waiters.set(id, set)
    const wake = () => {
      clearTimeout(timer)
      set.delete(wake)
      if (!set.size && waiters.get(id) === set) waiters.delete(id)
      resolve()
    }
    const timer = setTimeout(wake, ms)
    set.add(wake)
  })
}

/** Whether the asker has gone (the connection closed before the answer): a waiting GET then stops reading the run. */
export const requestGone = (event: H3Event): boolean => event.node.res.closed
