// Runs model fits off the request thread. Bundled into .output/server/workers/ at build time (see nuxt.config.ts)
// because the Nitro bundle has no separate file a Worker could load. For large rounds the row passes also use the
// other cores: helper threads started from this same bundle (see pass-pool.ts). The runner (fit-runner.ts) keeps a
// worker for the next fit, so its helpers are started once and stay, idle (blocked on a futex), between fits.
import { setFlagsFromString } from 'node:v8'
import { runInNewContext } from 'node:vm'
import { isMainThread, parentPort, workerData } from 'node:worker_threads'
import { EngineInputError, runModel } from '../../shared/utils/stats'
import { LARGE_FIT_ROWS, rowsOf, type FitAnswer, type FitMessage, type FitRequest, type FitReply } from './fit-protocol'
import { KernelMemoryCache } from './pass-kernel'
import { PARALLEL_MIN_ROWS, startPassHelpers, type PassHelpers } from './pass-pool'
import { WARM_UP_FITS, warmUpData, warmUpSpec } from './warm-up'

let helpers: Promise<PassHelpers> | null = null
/**
 * The design's memories, kept from one fit for the next up to 32 MB (a 10^5-row design of 36 terms): a later fit of
 * that size finds them already mapped. Larger fits end the worker (fit-runner.ts), which returns everything.
 */
const memories = new KernelMemoryCache(32 * 2 ** 20)

/**
 * A full garbage collection, run once a large fit's input columns have been let go. Why: V8 frees an ArrayBuffer only
 * at its next full collection, and nothing in the rest of a fit triggers one, so at 10^6 rows the 92 MB of columns
 * stayed beside the 88 MB design to the end. With this and the malloc setting the scripts give the server (README,
 * Configuration), the server's growth during the 10^6 fit fell from 3.2 to 2.7 × the design. The flag is set at run
 * time because a worker cannot be started with V8 options.
 */
setFlagsFromString('--expose-gc')
const collectGarbage = runInNewContext('gc') as () => void

async function fit(request: FitRequest): Promise<FitReply> {
  const rows = rowsOf(request.data)
  const passes = rows >= PARALLEL_MIN_ROWS ? await (helpers ??= startPassHelpers(new URL(import.meta.url))) : null
  try {
    return {
      ok: true,
      results: runModel(request.data, request.spec, {
        arrayBuffer: passes ? memories.take : undefined,
        parallel: (design, link) => (passes && design.n >= PARALLEL_MIN_ROWS ? passes.attach(design, link) : null),
        // The columns came here to be fitted (moved from the loader): once the design holds them, nothing else does.
        inputDone: () => {
          if (Array.isArray(request.data)) return
          for (const key of Object.keys(request.data)) Reflect.deleteProperty(request.data, key)
          if (rows >= LARGE_FIT_ROWS) collectGarbage()
        }
      })
    }
  }
  finally {
    // The helpers let go of this fit's design, so its arrays can be collected while the worker waits for the next.
    passes?.detach()
  }
}

async function answer(message: FitMessage): Promise<FitReply> {
  try {
    if (message.kind === 'fit') return await fit(message.request)
    let reply: FitReply = { ok: true, results: null as never }
    for (let i = 0; i < WARM_UP_FITS && reply.ok; i++) {
      reply = await fit({ data: warmUpData(), spec: warmUpSpec })
      memories.recycle()
    }
    return reply
  }
  catch (error) {
    return error instanceof EngineInputError
      ? { ok: false, error: { kind: 'input', code: error.code, message: error.message, variables: error.variables } }
      : { ok: false, error: { kind: 'internal', code: 'engine_failure', message: error instanceof Error ? error.message : String(error), variables: [] } }
  }
}

// A pass helper (started by pass-pool.ts from this file) never reaches here: its loop runs at import.
if (!isMainThread && workerData?.role !== 'furrowcast-pass') {
  parentPort?.on('message', async (message: FitMessage) => {
    const reply = await answer(message)
    // The warm-up's results are not needed: only that it ran (and whether it failed).
    const sent: FitAnswer = { id: message.id, reply: message.kind === 'warm-up' && reply.ok ? { ok: true, results: null as never } : reply }
    parentPort?.postMessage(sent)
    // The answer holds no view of the design's memories (the results are plain figures, copied when posted).
    memories.recycle()
  })
}
