// Every route's errors pass here before they are rendered. Nitro calls the 'error' hooks synchronously just
// before its error handler runs, so changing the error here changes the answer: passing database trouble
// (down, frozen, deadlock, lock wait, a Galera node not ready) becomes 503 with Retry-After instead of 500.
export default defineNitroPlugin((nitroApp) => {
  nitroApp.hooks.hook('error', (error, { event }) => {
    if (!event) return
    markRetryable(event, error as Parameters<typeof markRetryable>[1])
  })
})
