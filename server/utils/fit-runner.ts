import { existsSync } from 'node:fs'
import path from 'node:path'
import { Worker } from 'node:worker_threads'
import type { DataInput, ModelSpec } from '#shared/utils/stats'
import { LARGE_FIT_ROWS, rowsOf, type FitAnswer, type FitMessage, type FitReply, type FitTask } from '../workers/fit-protocol'

export interface FitRunnerOptions {
  /** The worker script; defaults to the one bundled beside the built server. */
  workerPath?: string
  timeoutMs?: number
  /** At most this many fits at once per app server; more wait their turn. */
  concurrency?: number
  /** Buffers of `data` to move to the worker instead of copying (they are unusable here afterwards). */
  transfer?: ArrayBuffer[]
}

/** Workers kept between fits. One: a second fit at the same moment starts its own worker, as every fit once did. */
const KEPT = 1

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

/** A fit worker and the answers it still owes, by message id. */
class FitWorker {
  readonly worker: Worker
  readonly path: string
  private nextId = 1
  private pending = new Map<number, { resolve: (reply: FitReply) => void, reject: (error: Error) => void }>()
  private dead: Error | null = null

  constructor(workerPath: string) {
    this.path = workerPath
    this.worker = new Worker(workerPath)
    // A kept worker must not hold the process open on its own (tests, a server shutting down); one owing an answer does.
    this.worker.unref()
    this.worker.on('message', (answer: FitAnswer) => {
      const waiter = this.pending.get(answer.id)
      this.pending.delete(answer.id)
      if (this.pending.size === 0) this.worker.unref()
      waiter?.resolve(answer.reply)
    })
    const fail = (error: Error) => {
      this.dead ??= error
      for (const waiter of this.pending.values()) waiter.reject(error)
      this.pending.clear()
    }
    this.worker.on('error', fail)
    this.worker.on('exit', code => fail(new Error(`the fit worker stopped early (exit code ${code})`)))
  }

  get alive(): boolean {
    return this.dead === null
  }

  send(task: FitTask, transfer: ArrayBuffer[] = []): Promise<FitReply> {
    if (this.dead) return Promise.reject(this.dead)
    const id = this.nextId++
    return new Promise<FitReply>((resolve, reject) => {
      this.pending.set(id, { resolve, reject })
      this.worker.ref()
      const message: FitMessage = { ...task, id }
      this.worker.postMessage(message, transfer)
    })
  }

  async end(): Promise<void> {
    this.dead ??= new Error('the fit worker was ended')
    await this.worker.terminate()
  }
}

const kept: FitWorker[] = []

/**
 * Starts a worker for the next fit and has it run the warm-up fit (warm-up.ts), so that a coordinator's fit finds
 * the engine compiled and its helper threads started. Does nothing when a worker is kept already or the bundle is
 * missing (a development server). The server calls it at start (plugins/fit-worker.ts) and after ending a worker.
 */
export function prepareFitWorker(workerPath = defaultWorkerPath()): Promise<void> {
  if (kept.length >= KEPT || !existsSync(workerPath)) return Promise.resolve()
  const fresh = new FitWorker(workerPath)
  kept.push(fresh)
  return fresh.send({ kind: 'warm-up' }).then((reply) => {
    if (!reply.ok) throw new Error(reply.error.message)
  }).catch(async (error: unknown) => {
    // A warm-up that fails is a broken bundle or a worker ended meanwhile: a fit then starts a worker of its own.
    if (fresh.alive) console.error('[furrowcast] the fit worker\'s warm-up failed:', error instanceof Error ? error.message : error)
    const at = kept.indexOf(fresh)
    if (at >= 0) kept.splice(at, 1)
    await fresh.end()
  })
}

/**
 * Fits a model in a worker thread, so a fit on a million rows never blocks other requests. The worker is kept for
 * the next fit (warm: its code compiled, its helper threads started) unless the fit was large, failed inside the
 * worker or ran past the timeout; then it is ended, which returns its memory and stops a runaway fit, and a fresh
 * one is prepared.
 */
export async function runFitInWorker(data: DataInput, spec: ModelSpec, options: FitRunnerOptions = {}): Promise<FitReply> {
  const workerPath = options.workerPath ?? defaultWorkerPath()
  if (!existsSync(workerPath)) throw new Error(`fit worker not found at ${workerPath}; is the server built?`)
  const rows = rowsOf(data)
  const release = await slot(options.concurrency ?? 2)
  for (let i = kept.length - 1; i >= 0; i--) if (!kept[i]!.alive) kept.splice(i, 1)
  const at = kept.findIndex(w => w.path === workerPath)
  const worker = at >= 0 ? kept.splice(at, 1)[0]! : new FitWorker(workerPath)
  let keep = false
  try {
    const timeoutMs = options.timeoutMs ?? 300_000
    let timer: NodeJS.Timeout | undefined
    const reply = await Promise.race([
      worker.send({ kind: 'fit', request: { data, spec } }, options.transfer),
      new Promise<never>((_, reject) => {
        timer = setTimeout(() => reject(new Error(`the fit did not finish within ${timeoutMs} ms`)), timeoutMs)
      })
    ]).finally(() => clearTimeout(timer))
    // After a large fit the worker is ended: its arrays (the design alone is 88 MB at 10^6 rows and ten covariates) go
    // back to the system at once rather than whenever its heap is next collected, and a fresh one is warmed.
    keep = rows < LARGE_FIT_ROWS && (reply.ok || reply.error.kind === 'input') && worker.alive && kept.length < KEPT
    return reply
  }
  finally {
    release()
    if (keep) kept.push(worker)
    else {
      await worker.end()
      void prepareFitWorker(workerPath)
    }
  }
}

/** Ends the kept workers (tests; a server stopping). */
export async function endFitWorkers(): Promise<void> {
  await Promise.all(kept.splice(0).map(w => w.end()))
}

/** The thread ids of the kept workers, oldest first (for tests of the keeping). */
export function keptFitWorkerIds(): number[] {
  return kept.map(w => w.worker.threadId)
}
