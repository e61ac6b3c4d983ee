// Retries queued mail on an interval, so a message that met a mail server that was down still goes out.
// Each server runs the loop; the claim in deliverDueMail keeps them from sending a message twice.
export default defineNitroPlugin((nitroApp) => {
  const seconds = serverConfig().MAIL_RETRY_SECONDS
  if (seconds === 0) return
  let running = false
  const timer = setInterval(async () => {
    if (running) return
    running = true
    try {
      await databaseReady()
      await deliverDueMail(configuredDelivery())
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
