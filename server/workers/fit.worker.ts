// Runs one model fit off the request thread. Bundled into .output/server/workers/ at build time
// (see nuxt.config.ts) because the Nitro bundle has no separate file a Worker could load. For large rounds the
// row passes also use the other cores: helper threads started from this same bundle (see pass-pool.ts).
import { isMainThread, parentPort, workerData } from 'node:worker_threads'
import { EngineInputError, runModel } from '../../shared/utils/stats'
import type { FitRequest, FitReply } from './fit-protocol'
import { PARALLEL_MIN_ROWS, createPassPool, type PassPool } from './pass-pool'

function fit(request: FitRequest): FitReply {
  let pool: PassPool | null = null
  try {
    return {
      ok: true,
      results: runModel(request.data, request.spec, {
        parallel: (design, link) => (design.n >= PARALLEL_MIN_ROWS ? (pool = createPassPool(design, link, new URL(import.meta.url))) : null)
      })
    }
  }
  finally {
    void (pool as PassPool | null)?.close()
  }
}

// A pass helper (started by pass-pool.ts from this file) never reaches here: its loop runs at import.
if (!isMainThread && workerData?.role !== 'furrowcast-pass') {
  parentPort?.on('message', (request: FitRequest) => {
    let reply: FitReply
    try {
      reply = fit(request)
    }
    catch (error) {
      reply = error instanceof EngineInputError
        ? { ok: false, error: { kind: 'input', code: error.code, message: error.message, variables: error.variables } }
        : { ok: false, error: { kind: 'internal', code: 'engine_failure', message: error instanceof Error ? error.message : String(error), variables: [] } }
    }
    parentPort?.postMessage(reply)
  })
}
