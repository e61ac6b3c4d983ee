// Runs one model fit off the request thread. Bundled into .output/server/workers/ at build time
// (see nuxt.config.ts) because the Nitro bundle has no separate file a Worker could load.
import { parentPort } from 'node:worker_threads'
import { EngineInputError, runModel } from '../../shared/utils/stats'
import type { FitRequest, FitReply } from './fit-protocol'

parentPort?.on('message', (request: FitRequest) => {
  let reply: FitReply
  try {
    reply = { ok: true, results: runModel(request.data, request.spec) }
  }
  catch (error) {
    reply = error instanceof EngineInputError
      ? { ok: false, error: { kind: 'input', code: error.code, message: error.message, variables: error.variables } }
      : { ok: false, error: { kind: 'internal', code: 'engine_failure', message: error instanceof Error ? error.message : String(error), variables: [] } }
  }
  parentPort?.postMessage(reply)
})
