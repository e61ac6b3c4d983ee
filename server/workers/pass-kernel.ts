/**
 * The fused likelihood pass with its score and Hessian sums, and for probit its link terms, in WebAssembly
 * (pass-kernel.wat), for the pass pool.
 *
 * The kernel reads the design matrix where it lies, so X must be in a WebAssembly memory: `kernelArrayBuffer` gives
 * the design builder such memories (shared, so the pool's threads read them too), and the pool copies any other
 * design into one. Each memory keeps headroom past its data for the threads' scratch (one block of rows' y, w and
 * link terms, b, the running g and H, the separation figures), which `prepareKernel` lays out when a design is
 * attached. A design the kernel cannot take (a memory that cannot grow, a matrix past WebAssembly's 4 GB) runs the
 * JavaScript passes: the same sums, and for probit terms within 1e-15 of the kernel's.
 */
import { setFlagsFromString } from 'node:v8'
import { linkTermsRange, type Design, type Link, type LinkName } from '../../shared/utils/stats/index'
import { PASS_KERNEL_WASM } from './pass-kernel-wasm'

/** Rows whose link terms are formed before the kernel sums them: a multiple of 4 (the passes' stride), 32 KB per array. */
export const KERNEL_BLOCK_ROWS = 4096
/** The block's arrays in each thread's scratch: s, h, ℓ, y, w. */
const BLOCK_ARRAYS = 5
/** The separation check's running figures per column (see `separationStats` in pass-kernel.wat). */
const SEPARATION_PLANES = 7
const PAGE = 65536
/** Pages past the data for the scratch (4 MB): 4 threads at k = 300 need 3.6 MB. */
const HEADROOM_PAGES = 64
const MAX_PAGES = 65536

const memories = new WeakMap<ArrayBufferLike, WebAssembly.Memory>()
// 16 bytes more: for odd k the kernel reads one double past the last row (see pass-kernel.wat).
const pagesFor = (bytes: number) => Math.ceil((bytes + 16) / PAGE)
let compiled: WebAssembly.Module | null = null

function kernelModule(): WebAssembly.Module {
  if (!compiled) {
    // Compiled by the optimising tier at once: with the baseline tier the first 10^6-row Hessian sum took 51 ms, not 13.
    // The flag is the whole process's: WebAssembly compiled later anywhere in it also skips the baseline tier, which
    // only makes that compile slower.
    setFlagsFromString('--no-liftoff')
    compiled = new WebAssembly.Module(Buffer.from(PASS_KERNEL_WASM, 'base64'))
  }
  return compiled
}

/**
 * A shared buffer of at least `bytes` (rounded up to whole 64-KB pages, so callers give their arrays explicit
 * lengths) inside a WebAssembly memory the kernel can read; a plain SharedArrayBuffer when that would pass 4 GB.
 */
export function kernelArrayBuffer(bytes: number): SharedArrayBuffer {
  const pages = pagesFor(bytes)
  if (pages + HEADROOM_PAGES > MAX_PAGES) return new SharedArrayBuffer(bytes)
  const memory = new WebAssembly.Memory({ initial: pages, maximum: pages + HEADROOM_PAGES, shared: true })
  const buffer = memory.buffer as unknown as SharedArrayBuffer
  memories.set(buffer, memory)
  return buffer
}

/**
 * Kernel memories kept from one fit for the next, in one thread (the fit worker keeps one for its life). Why: this
 * machine pays about 11 µs per 4-KB page the first time fresh memory is touched (25 ms for a 10^5 × 11 design, half
 * of building it), and a WebAssembly memory is always mapped fresh, past the reach of the allocator's own reuse.
 * A memory given again is not cleared: the design builder writes every element it reads, and the kernel's scratch
 * is set at the start of every pass.
 */
export class KernelMemoryCache {
  private lent: WebAssembly.Memory[] = []
  private spare: WebAssembly.Memory[] = []

  /** At most `keepBytes` in all are kept between fits (the largest memories first). */
  constructor(private readonly keepBytes: number) {}

  /** As `kernelArrayBuffer`, from the smallest kept memory large enough if there is one. */
  readonly take = (bytes: number): SharedArrayBuffer => {
    const at = this.spare.findIndex(m => m.buffer.byteLength >= pagesFor(bytes) * PAGE)
    if (at < 0) {
      const buffer = kernelArrayBuffer(bytes)
      const memory = memories.get(buffer)
      if (memory) this.lent.push(memory)
      return buffer
    }
    const memory = this.spare.splice(at, 1)[0]!
    this.lent.push(memory)
    const buffer = memory.buffer as unknown as SharedArrayBuffer
    memories.set(buffer, memory)
    return buffer
  }

  /** Takes back every memory given since the last call: the caller holds no view of them any more. */
  recycle(): void {
    const all = [...this.spare, ...this.lent].sort((a, b) => b.buffer.byteLength - a.buffer.byteLength)
    this.lent = []
    this.spare = []
    let kept = 0
    for (const memory of all) {
      if (kept + memory.buffer.byteLength > this.keepBytes) continue
      this.spare.push(memory)
      kept += memory.buffer.byteLength
    }
    this.spare.reverse()
  }

  /** Bytes kept for the next fit. */
  get keptBytes(): number {
    return this.spare.reduce((sum, m) => sum + m.buffer.byteLength, 0)
  }
}

/**
 * X in a kernel memory: the design's own when it was built in one (at offset 0), else a copy (past 4 GB a plain shared
 * copy, which `prepareKernel` then declines).
 */
export function kernelMatrix(X: Float64Array): Float64Array {
  if (X.byteOffset === 0 && memories.has(X.buffer)) return X
  const copy = new Float64Array(kernelArrayBuffer(X.byteLength), 0, X.length)
  copy.set(X)
  return copy
}

/** Where the kernel's scratch lies in the memory that holds X; posted to the pool's threads with the design. */
export interface KernelLayout {
  memory: WebAssembly.Memory
  k: number
  /** H's doubles per row: k rounded up to even (the kernel writes cells in pairs). */
  kp: number
  /** Byte address of the first thread's scratch, and each thread's share. */
  scratch: number
  perThread: number
}

const align16 = (v: number): number => Math.ceil(v / 16) * 16

/** Lays out the scratch of `threads` threads past X, growing X's memory if needed; null when the kernel can't run. */
export function prepareKernel(X: Float64Array, k: number, threads: number): KernelLayout | null {
  const memory = X.byteOffset === 0 ? memories.get(X.buffer) : undefined
  if (!memory) return null
  const kp = k + (k % 2)
  const perThread = align16(KERNEL_BLOCK_ROWS * 8) * BLOCK_ARRAYS + align16(kp * 8) + align16(k * 8) + align16(k * kp * 8) + align16(SEPARATION_PLANES * kp * 8)
  const scratch = align16(X.byteLength + 16)
  const needed = scratch + threads * perThread
  const have = memory.buffer.byteLength
  if (needed > have) {
    try {
      memory.grow(Math.ceil((needed - have) / PAGE))
    }
    catch {
      return null
    }
  }
  return { memory, k, kp, scratch, perThread }
}

type Accumulate = (px: number, step: number, ps: number, ph: number, rows: number, k: number, kp: number, pg: number, pH: number) => void
type SeparationStats = (px: number, k: number, kp: number, py: number, rows: number, pst: number) => void
type ProbitTerms = (px: number, step: number, pb: number, k: number, py: number, pw: number, weighted: number, ps: number, ph: number, pl: number, rows: number) => void

/** One thread's instance of the kernel and views of its scratch. */
export interface KernelRunner {
  layout: KernelLayout
  accumulate: Accumulate
  probitTerms: ProbitTerms
  separationStats: SeparationStats
  s: Float64Array
  h: Float64Array
  l: Float64Array
  y: Float64Array
  w: Float64Array
  b: Float64Array
  g: Float64Array
  H: Float64Array
  stats: Float64Array
  acc: Float64Array
  t: Float64Array
  ps: number
  ph: number
  pl: number
  py: number
  pw: number
  pb: number
  pg: number
  pH: number
  pst: number
}

/** Thread `index`'s runner (0 is the pool's caller, helpers count from 1). */
export function kernelRunner(layout: KernelLayout, index: number): KernelRunner {
  const { memory, k, kp } = layout
  const instance = new WebAssembly.Instance(kernelModule(), { env: { memory } })
  const buffer = memory.buffer
  const block = align16(KERNEL_BLOCK_ROWS * 8)
  const ps = layout.scratch + index * layout.perThread
  const ph = ps + block
  const pl = ph + block
  const py = pl + block
  const pw = py + block
  const pb = pw + block
  const pg = pb + align16(kp * 8)
  const pH = pg + align16(k * 8)
  const pst = pH + align16(k * kp * 8)
  const rows = (at: number) => new Float64Array(buffer, at, KERNEL_BLOCK_ROWS)
  return {
    layout,
    accumulate: instance.exports.accumulate as Accumulate,
    probitTerms: instance.exports.probitTerms as ProbitTerms,
    separationStats: instance.exports.separationStats as SeparationStats,
    s: rows(ps), h: rows(ph), l: rows(pl), y: rows(py), w: rows(pw),
    // kp cells: the one past b stays 0 (see probitTerms)
    b: new Float64Array(buffer, pb, kp),
    g: new Float64Array(buffer, pg, k),
    H: new Float64Array(buffer, pH, k * kp),
    stats: new Float64Array(buffer, pst, SEPARATION_PLANES * kp),
    acc: new Float64Array(2),
    t: new Float64Array(3),
    ps, ph, pl, py, pw, pb, pg, pH, pst
  }
}

/**
 * The probit link's terms of `rows` rows from row a, `step` apart, by the kernel (`probitTerms`), into run.s and
 * run.h; adds ℓ and the perfectly predicted rows to run.acc. Rows the kernel leaves (|x'b| ≥ 3, where the normal
 * tail needs the continued fraction, and an odd last row) are done here by the link's own `obsTerms`. The terms agree
 * with `obsTerms` to a few units in the last place (tests/unit/server/pass-kernel.test.ts), not bit for bit: exp and
 * log are the kernel's own.
 */
function probitTermsByKernel(design: Design, link: Link, a: number, rows: number, step: number, run: KernelRunner): void {
  const { k, X, y, w } = design
  if (step === 1) {
    run.y.set(y.subarray(a, a + rows))
    if (w) run.w.set(w.subarray(a, a + rows))
  }
  else {
    for (let r = 0; r < rows; r++) run.y[r] = y[a + r * step]!
    if (w) for (let r = 0; r < rows; r++) run.w[r] = w[a + r * step]!
  }
  run.probitTerms(X.byteOffset + a * k * 8, step * k * 8, run.pb, k, run.py, run.pw, w ? 1 : 0, run.ps, run.ph, run.pl, rows)
  const { s, h, l, b, t } = run
  let ll = run.acc[0]!
  let perfect = run.acc[1]!
  for (let r = 0; r < rows; r++) {
    let lr = l[r]!
    const i = a + r * step
    const wr = w ? w[i]! : 1
    if (lr !== lr) {
      const off = i * k
      let eta = 0
      for (let j = 0; j < k; j++) eta += X[off + j]! * b[j]!
      link.obsTerms(eta, y[i]!, t)
      lr = t[0]!
      s[r] = wr * t[1]!
      h[r] = wr * t[2]!
    }
    ll += wr * lr
    if (lr > -1e-10) perfect++
  }
  run.acc[0] = ll
  run.acc[1] = perfect
}

/** Whether `evaluateRangeWithKernel` can take rows a step apart for this link: only the kernel's probit terms can. */
export function kernelTakesRowsApart(linkName: LinkName): boolean {
  return linkName === 'probit'
}

/**
 * The fused pass over rows [start, end) — with `step` > 1 over the rows of that range that are multiples of
 * `step` (the starting values' subsample, fit.ts; probit only, see `kernelTakesRowsApart`) — with the score and Hessian sums
 * formed by the kernel, a block of rows at a time. The link terms: for probit by the kernel too (`probitTermsByKernel`)
 * unless `jsLink`; else `linkTermsRange`, and then the results are `evaluateRange`'s, the same doubles. Adds to g and the
 * lower triangle of H (k×k); returns [ℓ, rows predicted perfectly].
 */
export function evaluateRangeWithKernel(design: Design, link: Link, b: ArrayLike<number>, start: number, end: number, run: KernelRunner, g: Float64Array, H: Float64Array, jsLink = false, step = 1): [number, number] {
  const { k, X } = design
  const kp = run.layout.kp
  const byKernel = kernelTakesRowsApart(link.name) && !jsLink
  if (step !== 1 && !byKernel) throw new Error('rows a step apart are for the probit kernel only')
  run.g.fill(0)
  run.H.fill(0)
  run.acc.fill(0)
  run.b.fill(0)
  run.b.set(b)
  const first = Math.ceil(start / step) * step
  const count = first < end ? Math.floor((end - 1 - first) / step) + 1 : 0
  for (let done = 0; done < count; done += KERNEL_BLOCK_ROWS) {
    const a = first + done * step
    const rows = Math.min(KERNEL_BLOCK_ROWS, count - done)
    if (byKernel) probitTermsByKernel(design, link, a, rows, step, run)
    else linkTermsRange(design, link, b, a, a + rows, run.s, run.h, run.acc)
    run.accumulate(X.byteOffset + a * k * 8, step * k * 8, run.ps, run.ph, rows, k, kp, run.pg, run.pH)
  }
  for (let j = 0; j < k; j++) {
    g[j]! += run.g[j]!
    for (let m = 0; m <= j; m++) H[j * k + m]! += run.H[j * kp + m]!
  }
  return [run.acc[0]!, run.acc[1]!]
}

/**
 * The separation check's column statistics over rows [start, end) — `separationStatsRange`'s, into `out` in its
 * layout — formed by the kernel a block of rows at a time. The intercept's figures are left as that function leaves
 * them (it skips column 0).
 */
export function separationStatsWithKernel(design: Design, start: number, end: number, run: KernelRunner, out: Float64Array): void {
  const { k, X, y } = design
  const kp = run.layout.kp
  const st = run.stats
  // The planes' starting figures: minima +∞, maxima −∞, sums and the flag 0 (as `separationStatsRange` starts them).
  const startingFigure = (plane: number): number => (plane === 0 || plane === 2 ? Infinity : plane === 1 || plane === 3 ? -Infinity : 0)
  for (let plane = 0; plane < SEPARATION_PLANES; plane++) st.subarray(plane * kp, (plane + 1) * kp).fill(startingFigure(plane))
  let n1 = 0
  for (let a = start; a < end; a += KERNEL_BLOCK_ROWS) {
    const e = Math.min(end, a + KERNEL_BLOCK_ROWS)
    run.y.set(y.subarray(a, e))
    for (let i = a; i < e; i++) n1 += y[i]!
    run.separationStats(X.byteOffset + a * k * 8, k, kp, run.py, e - a, run.pst)
  }
  for (let plane = 0; plane < SEPARATION_PLANES; plane++) {
    out[plane * k] = startingFigure(plane)
    for (let j = 1; j < k; j++) {
      const v = st[plane * kp + j]!
      // The flag plane holds a mask: any bit set (a NaN pattern) is 1.
      out[plane * k + j] = plane === SEPARATION_PLANES - 1 ? (v !== 0 ? 1 : 0) : v
    }
  }
  out[7 * k] = n1
}
