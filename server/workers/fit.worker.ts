// Runs one model fit off the request thread. Bundled into .output/server/workers/ at build time
// (see nuxt.config.ts) because the Nitro bundle has no separate file a Worker could load. For large rounds the
// row passes also use the other cores: helper threads started from this same bundle (see pass-pool.ts).
import { isMainThread, parentPort, workerData } from 'node:worker_threads'
import { EngineInputError, runModel } from '../../shared/utils/stats'
import type { FitRequest, FitReply } from './fit-protocol'
import { PARALLEL_MIN_ROWS, startPassHelpers, type PassHelpers } from './pass-pool'

function rowsOf(data: FitRequest['data']): number {
  if (Array.isArray(data)) return data.length
  const first = Object.values(data)[0] as { length?: number, codes?: Int32Array } | undefined
  return first?.codes?.length ?? first?.length ?? 0
}

async function fit(request: FitRequest): Promise<FitReply> {
  const helpers: PassHelpers | null = rowsOf(request.data) >= PARALLEL_MIN_ROWS ? await startPassHelpers(new URL(import.meta.url)) : null
  try {
    return {
      ok: true,
      results: runModel(request.data, request.spec, {
        arrayBuffer: helpers ? bytes => new SharedArrayBuffer(bytes) : undefined,
        parallel: (design, link) => (helpers && design.n >= PARALLEL_MIN_ROWS ? helpers.attach(design, link) : null)
      })
    }
  }
  finally {
    void helpers?.close()
  }
}

// A pass helper (started by pass-pool.ts from this file) never reaches here: its loop runs at import.
if (!isMainThread && workerData?.role !== 'furrowcast-pass') {
  parentPort?.on('message', async (request: FitRequest) => {
    let reply: FitReply
    try {
      reply = await fit(request)
    }
    catch (error) {
      reply = error instanceof EngineInputError
        ? { ok: false, error: { kind: 'input', code: error.code, message: error.message, variables: error.variables } }
        : { ok: false, error: { kind: 'internal', code: 'engine_failure', message: error instanceof Error ? error.message : String(error), variables: [] } }
    }
    parentPort?.postMessage(reply)
  })
}
