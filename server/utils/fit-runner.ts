import { existsSync } from 'node:fs'
import path from 'node:path'
import { Worker } from 'node:worker_threads'
import type { DataInput, ModelSpec } from '#shared/utils/stats'
import type { FitReply } from '../workers/fit-protocol'

export interface FitRunnerOptions {
  /** The worker script; defaults to the one bundled beside the built server. */
  workerPath?: string
  timeoutMs?: number
  /** At most this many fits at once per app server; more wait their turn. */
  concurrency?: number
  /** Buffers of `data` to move to the worker instead of copying (they are unusable here afterwards). */
  transfer?: ArrayBuffer[]
}

const waiting: Array<() => void> = []
let running = 0

function defaultWorkerPath(): string {
  const fromEnv = process.env.FURROWCAST_FIT_WORKER
  if (fromEnv) return fromEnv
  // The built server is started as .output/server/index.mjs; the worker bundle sits beside it.
  return path.join(path.dirname(process.argv[1] ?? '.'), 'workers', 'fit.worker.mjs')
}

async function slot(limit: number): Promise<() => void> {
  if (running >= limit) await new Promise<void>(resolve => waiting.push(resolve))
  running += 1
  return () => {
    running -= 1
    waiting.shift()?.()
  }
}

/**
 * Fits a model in a worker thread, so a fit on a million rows never blocks other requests. One worker per
 * fit: its memory is returned to the system when it ends, and a runaway fit can be stopped at the timeout.
 */
export async function runFitInWorker(data: DataInput, spec: ModelSpec, options: FitRunnerOptions = {}): Promise<FitReply> {
  const workerPath = options.workerPath ?? defaultWorkerPath()
  if (!existsSync(workerPath)) throw new Error(`fit worker not found at ${workerPath}; is the server built?`)
  const release = await slot(options.concurrency ?? 2)
  const worker = new Worker(workerPath)
  try {
    return await new Promise<FitReply>((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error(`the fit did not finish within ${options.timeoutMs ?? 300_000} ms`)), options.timeoutMs ?? 300_000)
      worker.once('message', (reply: FitReply) => {
        clearTimeout(timer)
        resolve(reply)
      })
      worker.once('error', (error) => {
        clearTimeout(timer)
        reject(error)
      })
      worker.once('exit', (code) => {
        clearTimeout(timer)
        reject(new Error(`the fit worker stopped early (exit code ${code})`))
      })
      worker.postMessage({ data, spec }, options.transfer ?? [])
    })
  }
  finally {
    release()
    await worker.terminate()
  }
}
