import type { H3Event } from 'h3'

// Sync requests in flight per person on this server. A tablet stuck in a retry loop, or one person's several
// devices, may hold at most SYNC_MAX_IN_FLIGHT_PER_USER of the database connections; the rest go to others.
const inFlight = new Map<number, number>()

/**
 * Runs `work` as one of the person's in-flight sync requests, or answers 429 with Retry-After when they already
 * have the maximum running. The count is per app server: behind a load balancer each server keeps its own.
 */
export async function withSyncSlot<T>(event: H3Event, userId: number, work: () => Promise<T>): Promise<T> {
  const running = inFlight.get(userId) ?? 0
  if (running >= serverConfig().SYNC_MAX_IN_FLIGHT_PER_USER) {
    setResponseHeader(event, 'Retry-After', retryAfterSeconds(1))
    throw createError({ statusCode: 429, message: 'This account is already sending visits from another tablet or tab. They will be sent when that finishes.' })
  }
  inFlight.set(userId, running + 1)
  let released = false
  const release = () => {
    if (released) return
    released = true
    const left = (inFlight.get(userId) ?? 1) - 1
    if (left > 0) inFlight.set(userId, left)
    else inFlight.delete(userId)
  }
  // A request whose client went away may never finish reading its body: its slot is freed with the connection,
  // or the person would be locked out with 429 for good.
  event.node.res.once('close', release)
  try {
    return await work()
  }
  finally {
    release()
  }
}

// Batches being written at once on this server. The others wait here, in arrival order, holding no database
// connection: under a crowd of tablets the wait is in this queue, not in the pool (whose acquire timeout would
// turn a busy-but-healthy server into 503s).
let writing = 0
const queue: Array<{ grant: () => void }> = []

function release() {
  const next = queue.shift()
  if (next) next.grant()
  else writing--
}

/**
 * Runs `work` (one batch write) when a writing slot is free. A batch waits at most SYNC_QUEUE_WAIT_MS, and is
 * answered 503 at once if the database failed while it waited, so a dead database does not hold a long queue.
 */
export async function withIngestSlot<T>(work: () => Promise<T>): Promise<T> {
  const config = serverConfig()
  if (writing < config.SYNC_MAX_CONCURRENT_BATCHES) {
    writing++
  }
  else {
    const waitedFrom = Date.now()
    await new Promise<void>((resolve, reject) => {
      const entry = {
        grant: () => {
          clearTimeout(timer)
          resolve()
        }
      }
      const timer = setTimeout(() => {
        queue.splice(queue.indexOf(entry), 1)
        reject(createError({ statusCode: 503, message: BUSY_MESSAGE }))
      }, config.SYNC_QUEUE_WAIT_MS)
      queue.push(entry)
    })
    if (databaseFailedSince(waitedFrom)) {
      release()
      throw createError({ statusCode: 503, message: UNAVAILABLE_MESSAGE })
    }
  }
  try {
    return await work()
  }
  catch (error) {
    // Before the slot passes on: the next batch in the queue then fails fast instead of waiting its turn.
    if (retryableReason(error) === 'unavailable') noteDatabaseUnavailable()
    throw error
  }
  finally {
    release()
  }
}
