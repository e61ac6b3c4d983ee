// Retries queued mail on an interval, so a message that met a mail server that was down still goes out.
// Each server runs the loop; the claim in deliverDueMail keeps them from sending a message twice.
// The same loop drops old rate-limit events once an hour.
export default defineNitroPlugin((nitroApp) => {
  const seconds = serverConfig().MAIL_RETRY_SECONDS
  if (seconds === 0) return
  let running = false
  let prunedAt = 0
  const timer = setInterval(async () => {
    if (running) return
    running = true
    try {
      await databaseReady()
      await deliverDueMail(configuredDelivery())
      if (Date.now() - prunedAt > 3_600_000) {
        await pruneRateEvents()
        prunedAt = Date.now()
      }
    }
    catch (error) {
      console.error('[furrowcast] mail retry failed:', error instanceof Error ? error.message : error)
    }
    finally {
      running = false
    }
  }, seconds * 1000)
  timer.unref()
  nitroApp.hooks.hook('close', () => clearInterval(timer))
})
