/**
 * The engine's row passes on several threads over shared memory (an implementation of `ParallelPasses`).
 *
 * The design's arrays are copied once into SharedArrayBuffers (none when the design was built there; X goes into a
 * WebAssembly memory, where the pass kernel of pass-kernel.ts forms the likelihood pass's sums); helper threads
 * (this same module's file, started with `workerData.role = 'furrowcast-pass'`) read them in place. A pass is one
 * round of Atomics: the caller writes the parameters and the task, bumps a generation counter and wakes the helpers;
 * every thread, the caller's included, takes chunks of rows in turn and writes each chunk's partial sums into that
 * chunk's slot; the caller waits until every helper has run out of chunks and adds the slots in chunk order.
 * Synchronous on the caller's side (Atomics.wait), because the engine's Newton loop is synchronous — which is why
 * this is not a message-passing pool. Used for n ≥ PARALLEL_MIN_ROWS only: below that, starting
 * threads costs more than the pass.
 */
import { availableParallelism } from 'node:os'
import { MessageChannel, Worker, isMainThread, receiveMessageOnPort, workerData, type MessagePort } from 'node:worker_threads'
import {
  accumulateRange, clusterCount, clusterScoresRange, evaluateRange, evaluateRangeShifted, getLink, mergeSeparationStats, planEffects, rowBlocks,
  separationStatsLength, separationStatsRange, symmetrise,
  type Design, type DesignPlan, type LinkName, type ParallelPasses, type PassResult
} from '../../shared/utils/stats/index'
import {
  evaluateRangeWithKernel, kernelMatrix, kernelRunner, kernelTakesRowsApart, prepareKernel, separationStatsWithKernel, type KernelLayout, type KernelRunner
} from './pass-kernel'

export const PARALLEL_MIN_ROWS = 50_000
const ROLE = 'furrowcast-pass'
// Control words: generation, task, helpers done, stop, next chunk to take.
const GEN = 0
const TASK = 1
const DONE = 2
const STOP = 3
const NEXT = 4
/**
 * Rows per chunk at least, chunks per thread at most, and the bytes all chunks' partial sums may take. A pass is cut
 * into chunks that the threads take in turn (Atomics.add on NEXT) rather than one fixed block per thread: on this
 * 2-core machine the fit shares the cores with the app's own thread and MariaDB, and with fixed blocks every pass
 * waited for whichever thread had been interrupted (in the app at 10^5 rows the fit took 200–260 ms against 50–90 ms
 * alone). The partial sums are still added in chunk order, so a result does not depend on which thread took a chunk.
 */
const MIN_CHUNK_ROWS = 4096
const CHUNKS_PER_THREAD = 8
const RESULTS_BUDGET_BYTES = 16 * 2 ** 20
const TASK_EVALUATE = 1
const TASK_EVALUATE_SHIFTED = 2
const TASK_CLUSTER = 3
const TASK_AME = 4
const TASK_ATTACH = 5
const TASK_DETACH = 6
const TASK_SEPARATION = 7
const TASK_EVALUATE_EVERY = 8

interface Shared {
  n: number
  k: number
  G: number
  m: number
  slot: number
  /** Row ranges, in the order their partial sums are added; slot c of `results` holds chunk c's. */
  chunks: Array<[number, number]>
  link: LinkName
  plan: DesignPlan
  X: SharedArrayBuffer
  y: SharedArrayBuffer
  w: SharedArrayBuffer | null
  cluster: SharedArrayBuffer | null
  /** The WebAssembly kernel's scratch past X (see pass-kernel.ts); null: the JavaScript pass. */
  kernel: KernelLayout | null
  control: SharedArrayBuffer
  params: SharedArrayBuffer
  results: SharedArrayBuffer
}

/**
 * The array's shared buffer: the design's own when it was built in shared memory (see fit.worker.ts; it may be
 * longer than the array, see `kernelArrayBuffer`), else a copy.
 */
function sharedBufferOf(a: Float64Array | Int32Array): SharedArrayBuffer {
  if (a.buffer instanceof SharedArrayBuffer && a.byteOffset === 0) return a.buffer
  const sab = new SharedArrayBuffer(a.byteLength)
  new Uint8Array(sab).set(new Uint8Array(a.buffer, a.byteOffset, a.byteLength))
  return sab
}

/** What one thread holds of an attached design. */
interface Attached {
  s: Shared
  design: Design
  kernel: KernelRunner | null
}

/** Thread `index`'s view of the shared design (0 is the caller, helpers count from 1). */
function attachedOf(s: Shared, index: number): Attached {
  const design: Design = {
    n: s.n, k: s.k, X: new Float64Array(s.X, 0, s.n * s.k), y: new Float64Array(s.y, 0, s.n), w: s.w ? new Float64Array(s.w, 0, s.n) : null,
    cluster: s.cluster ? new Int32Array(s.cluster, 0, s.n) : null, clusterLabels: [], rowIndex: new Int32Array(0), plan: s.plan,
    rows: { totalRows: s.n, used: s.n, dropped: 0, byVariable: [] }, warnings: []
  }
  return { s, design, kernel: s.kernel ? kernelRunner(s.kernel, index) : null }
}

/** One chunk's share of the current task, written into result slot `t`. */
function runBlock({ s, design, kernel }: Attached, t: number, task: number): void {
  const [start, end] = s.chunks[t]!
  const k = s.k
  const params = new Float64Array(s.params)
  const out = new Float64Array(s.results, t * s.slot * 8, s.slot)
  out.fill(0)
  const link = getLink(s.link)
  const b = params.subarray(0, k)
  const shift = params.subarray(k, 2 * k)
  if (task === TASK_EVALUATE || task === TASK_EVALUATE_SHIFTED || task === TASK_EVALUATE_EVERY) {
    const g = out.subarray(2, 2 + k)
    const H = out.subarray(2 + k, 2 + k + k * k)
    // Every step-th row below a limit (params after b and the shift): the subsample's rows in this chunk.
    const [ll, perfect] = task === TASK_EVALUATE_EVERY
      ? evaluateRangeWithKernel(design, link, b, start, Math.min(end, params[2 * k + 1]!), kernel!, g, H, false, params[2 * k]!)
      : task === TASK_EVALUATE_SHIFTED
        ? evaluateRangeShifted(design, link, b, shift, start, end, g, H)
        : kernel
          ? evaluateRangeWithKernel(design, link, b, start, end, kernel, g, H)
          : evaluateRange(design, link, b, start, end, g, H)
    out[0] = ll
    out[1] = perfect
  }
  else if (task === TASK_CLUSTER) {
    clusterScoresRange(design, link, b, shift, start, end, out.subarray(0, s.G * k))
  }
  else if (task === TASK_SEPARATION) {
    if (kernel) separationStatsWithKernel(design, start, end, kernel, out)
    else separationStatsRange(design, start, end, out)
  }
  else if (task === TASK_AME) {
    const effects = planEffects(design)
    const values = out.subarray(1, 1 + s.m)
    const jac = effects.map((_, e) => out.subarray(1 + s.m + e * k, 1 + s.m + (e + 1) * k))
    out[0] = accumulateRange(design, link, b, effects, null, start, end, values, jac)
  }
}

/** Takes chunks of the current task until none is left (every thread, the caller's included, runs this). */
function runChunks(attached: Attached, control: Int32Array, task: number): void {
  for (;;) {
    const c = Atomics.add(control, NEXT, 1)
    if (c >= attached.s.chunks.length) return
    runBlock(attached, c, task)
  }
}

/** How many chunks a pass over n rows is cut into: enough to even out interrupted threads, within the budget. */
export function chunkCount(n: number, threads: number, slotDoubles: number): number {
  const byRows = Math.floor(n / MIN_CHUNK_ROWS)
  const byMemory = Math.floor(RESULTS_BUDGET_BYTES / (slotDoubles * 8))
  return Math.max(threads, Math.min(threads * CHUNKS_PER_THREAD, byRows, byMemory))
}

/**
 * The helper thread's loop: wait for a new generation, take chunks of the task, report, until told to stop. A new design
 * arrives as a message read synchronously (receiveMessageOnPort): the thread is blocked in Atomics.wait, never in
 * its event loop.
 */
function helperLoop(control: Int32Array, port: MessagePort, index: number): void {
  let attached: Attached | null = null
  let seen = 0
  for (;;) {
    Atomics.wait(control, GEN, seen)
    const gen = Atomics.load(control, GEN)
    if (gen === seen) continue
    seen = gen
    if (Atomics.load(control, STOP)) return
    const task = Atomics.load(control, TASK)
    if (task === TASK_ATTACH) attached = attachedOf(receiveMessageOnPort(port)!.message as Shared, index)
    else if (task === TASK_DETACH) attached = null
    else runChunks(attached!, control, task)
    Atomics.add(control, DONE, 1)
    Atomics.notify(control, DONE)
  }
}

if (!isMainThread && workerData?.role === ROLE) {
  // Tell the starter this thread has loaded, then serve passes.
  ;(workerData.port as MessagePort).postMessage('ready')
  helperLoop(new Int32Array(workerData.control as SharedArrayBuffer), workerData.port as MessagePort, workerData.index as number)
}

/** Started helper threads, ready to take a design. */
export interface PassHelpers {
  threads: number
  /** Gives the helpers this design (its arrays are replaced by shared copies) and returns its passes. */
  attach: (design: Design, link: LinkName) => ParallelPasses
  /** Makes the helpers let go of the last design, so that its arrays can be collected while they wait for another. */
  detach: () => void
  close: () => Promise<void>
}

/**
 * Starts `threads − 1` helper threads running `script` (a bundle or module that imports this one; its top level
 * starts the helper loop) and waits until they have loaded, so that no pass ever waits on a thread's start-up.
 * The script must be plain JavaScript (a bundle): helper threads do not get a TypeScript loader.
 */
export async function startPassHelpers(script: URL | string, threads = Math.min(4, availableParallelism())): Promise<PassHelpers> {
  const control = new Int32Array(new SharedArrayBuffer(20))
  const channels = Array.from({ length: threads - 1 }, () => new MessageChannel())
  const helpers = channels.map((ch, i) => new Worker(script, { workerData: { role: ROLE, control: control.buffer, port: ch.port2, index: i + 1 }, transferList: [ch.port2] }))
  await Promise.all(channels.map((ch, i) => new Promise<void>((resolve, reject) => {
    ch.port1.once('message', () => resolve())
    helpers[i]!.once('error', reject)
    helpers[i]!.once('exit', code => reject(new Error(`a pass helper thread stopped at start (exit code ${code})`)))
  })))
  for (const h of helpers) h.removeAllListeners('exit')

  function signal(task: number): void {
    Atomics.store(control, DONE, 0)
    Atomics.store(control, NEXT, 0)
    Atomics.store(control, TASK, task)
    Atomics.add(control, GEN, 1)
    Atomics.notify(control, GEN)
  }
  function waitHelpers(): void {
    const deadline = Date.now() + 120_000
    for (;;) {
      const done = Atomics.load(control, DONE)
      if (done >= helpers.length) return
      // Blocking: a helper that died cannot be heard from while this thread waits, hence the deadline.
      if (Date.now() > deadline) throw new Error('a pass helper thread did not answer within 120 s')
      Atomics.wait(control, DONE, done, 100)
    }
  }

  return {
    threads,
    attach(design, linkName) {
      const k = design.k
      const G = design.cluster ? clusterCount(design) : 0
      const m = planEffects(design).length
      const slot = Math.max(2 + k + k * k, G * k, 1 + m + m * k, separationStatsLength(k))
      const chunks = rowBlocks(design.n, chunkCount(design.n, threads, slot))
      const X = kernelMatrix(design.X)
      const shared: Shared = {
        n: design.n, k, G, m, slot, chunks, link: linkName, plan: design.plan,
        X: sharedBufferOf(X), y: sharedBufferOf(design.y), w: design.w ? sharedBufferOf(design.w) : null,
        cluster: design.cluster ? sharedBufferOf(design.cluster) : null, kernel: prepareKernel(X, k, threads),
        control: control.buffer as SharedArrayBuffer, params: new SharedArrayBuffer((2 * k + 2) * 8), results: new SharedArrayBuffer(chunks.length * slot * 8)
      }
      const attached = attachedOf(shared, 0)
      const mine = attached.design
      // The caller's design reads the shared copies from now on, so the private ones can be collected.
      design.X = mine.X
      design.y = mine.y
      design.w = mine.w
      design.cluster = mine.cluster
      for (const ch of channels) ch.port1.postMessage(shared)
      signal(TASK_ATTACH)
      waitHelpers()
      const params = new Float64Array(shared.params)

      function run(task: number, b: ArrayLike<number>, shift: ArrayLike<number> | null, every: [number, number] | null = null): Float64Array[] {
        params.fill(0)
        params.set(b, 0)
        if (shift) params.set(shift, k)
        if (every) params.set(every, 2 * k)
        signal(task)
        runChunks(attached, control, task)
        waitHelpers()
        return chunks.map((_, t) => new Float64Array(shared.results, t * slot * 8, slot))
      }

      /** The chunks' partial ℓ, g and lower triangles of H, added in chunk order. */
      function sumEvaluate(parts: Float64Array[]): PassResult {
        const g = new Float64Array(k)
        const H = new Float64Array(k * k)
        let ll = 0
        let perfect = 0
        for (const p of parts) {
          ll += p[0]!
          perfect += p[1]!
          for (let j = 0; j < k; j++) g[j]! += p[2 + j]!
          for (let j = 0; j < k * k; j++) H[j]! += p[2 + k + j]!
        }
        symmetrise(H, k)
        return { loglik: ll, gradient: g, hessian: H, perfectlyPredicted: perfect }
      }

      return {
        blocks: chunks.length,
        separationStats() {
          return mergeSeparationStats(run(TASK_SEPARATION, [], null), k)
        },
        evaluate(b, shift): PassResult {
          return sumEvaluate(run(shift ? TASK_EVALUATE_SHIFTED : TASK_EVALUATE, b, shift))
        },
        evaluateEvery: shared.kernel && kernelTakesRowsApart(linkName)
          ? (step, end, b) => sumEvaluate(run(TASK_EVALUATE_EVERY, b, null, [step, end]))
          : null,
        clusterScores(b, shift) {
          const parts = run(TASK_CLUSTER, b, shift)
          const U = new Float64Array(G * k)
          for (const p of parts) for (let j = 0; j < G * k; j++) U[j]! += p[j]!
          return U
        },
        ame(b) {
          const parts = run(TASK_AME, b, null)
          let weight = 0
          const values = new Float64Array(m)
          const jacobian = new Float64Array(m * k)
          for (const p of parts) {
            weight += p[0]!
            for (let e = 0; e < m; e++) values[e]! += p[1 + e]!
            for (let j = 0; j < m * k; j++) jacobian[j]! += p[1 + m + j]!
          }
          return { weight, values, jacobian }
        }
      }
    },
    detach() {
      signal(TASK_DETACH)
      waitHelpers()
    },
    async close() {
      Atomics.store(control, STOP, 1)
      Atomics.add(control, GEN, 1)
      Atomics.notify(control, GEN)
      await Promise.all(helpers.map(h => h.terminate()))
    }
  }
}
