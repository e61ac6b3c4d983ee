// A fit worker started and warmed when the server starts (fit-runner.ts), so the first model a coordinator fits does
// not wait for a thread to start and its engine code to compile. Started after the server's own start-up work, which
// it would otherwise compete with for the same cores.
export default defineNitroPlugin((nitroApp) => {
  const timer = setTimeout(() => void prepareFitWorker(), 2_000)
  timer.unref()
  nitroApp.hooks.hook('close', async () => {
    clearTimeout(timer)
    await endFitWorkers()
  })
})
