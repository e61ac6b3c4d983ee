// The retention check: every RETENTION_CHECK_MINUTES, the server holding the retention lease purges the personal
// data that is due (server/utils/retention.ts). The lease lasts the period, so on several servers only one runs it.
export default defineNitroPlugin((nitroApp) => {
  const minutes = serverConfig().RETENTION_CHECK_MINUTES
  if (minutes === 0) return
  let running = false
  const check = async () => {
    if (running) return
    running = true
    try {
      await databaseReady()
      if (await claimRetentionLease(Math.max(30, minutes * 60 - 30))) await purgeAllDue()
    }
    catch (error) {
      console.error('[furrowcast] retention check failed:', error instanceof Error ? error.message : error)
    }
    finally {
      running = false
    }
  }
  // The first check a minute after start (not during the start itself), then on the interval.
  const first = setTimeout(check, 60_000)
  const timer = setInterval(check, minutes * 60_000)
  first.unref()
  timer.unref()
  nitroApp.hooks.hook('close', () => {
    clearTimeout(first)
    clearInterval(timer)
  })
})
