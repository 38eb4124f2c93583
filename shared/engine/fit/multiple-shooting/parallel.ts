/**
 * One evaluation's segments spread over threads through shared memory (SharedArrayBuffer + Atomics,
 * standard JavaScript): the segments are independent simulations, so the fit's thread and any helper
 * threads take segment indices from one shared counter (work sharing) and write their rows of the
 * residual, the scaled defects and the Jacobian into shared arrays; the fit's thread waits until every
 * segment is done and copies the result out. The result does not depend on how the segments were
 * spread; a helper that is not up yet simply takes none.
 *
 * Each helper holds its own copy of the problem, built from the same sheet, data and options (the
 * host's job), and reads the penalty weight, the multipliers and the defect scales of each evaluation
 * from the shared block.
 *
 * Claims: evaluation g hands out the counter values g·K … g·K + nSeg − 1 (K = nSeg + 64): a claim from
 * another evaluation, or beyond nSeg, is dropped, so a late helper never works on stale inputs.
 * Atomics.wait blocks the calling thread: use this in worker threads or Node, not a browser's main thread.
 */
import type { MultipleShootingProblem, SegmentSharing } from './problem'

const GEN = 0
const NEXT = 1
const DONE = 2
const STOP = 3
const FAIL = 4
const WITHJAC = 5
const SIMS = 6
const CTRL = 8

interface Views {
  ctrl: Int32Array
  w: Float64Array
  mu: Float64Array
  lambda: Float64Array
  scale: Float64Array
  r: Float64Array
  defects: Float64Array
  jac: Float64Array
}

function bytesFor(ms: MultipleShootingProblem): number {
  const f64 = ms.n + 1 + ms.nDefects + ms.stateScale.length + ms.m + ms.nDefects + ms.m * ms.n
  return CTRL * 4 + f64 * 8
}

function views(ms: MultipleShootingProblem, buf: SharedArrayBuffer): Views {
  if (buf.byteLength !== bytesFor(ms)) throw new Error('the shared segment block does not match this problem')
  let at = CTRL * 4
  const take = (len: number) => {
    const v = new Float64Array(buf, at, len)
    at += len * 8
    return v
  }
  return {
    ctrl: new Int32Array(buf, 0, CTRL),
    w: take(ms.n), mu: take(1), lambda: take(ms.nDefects), scale: take(ms.stateScale.length),
    r: take(ms.m), defects: take(ms.nDefects), jac: take(ms.m * ms.n),
  }
}

/** Takes segment indices of evaluation g until none is left; returns how many it evaluated. */
function work(ms: MultipleShootingProblem, v: Views, g: number, compute: boolean): number {
  const nSeg = ms.segments.length
  const K = nSeg + 64
  let n = 0
  for (;;) {
    const c = Atomics.add(v.ctrl, NEXT, 1)
    if (Math.floor(c / K) !== g || c % K >= nSeg) return n
    let ok = false
    try {
      if (compute) ok = ms.evaluateSegment(c % K, v.w, v.r, v.ctrl[WITHJAC] ? v.jac : null, v.defects)
    } finally {
      if (!ok) Atomics.store(v.ctrl, FAIL, 1)
      Atomics.add(v.ctrl, DONE, 1)
      Atomics.notify(v.ctrl, DONE)
    }
    n++
  }
}

/** The fit thread's side: owns the shared block; `buffer` goes to the helpers. */
export class SharedSegments implements SegmentSharing {
  readonly buffer: SharedArrayBuffer
  private readonly v: Views
  private gen = 0
  private done = 0

  constructor(ms: MultipleShootingProblem) {
    this.buffer = new SharedArrayBuffer(bytesFor(ms))
    this.v = views(ms, this.buffer)
  }

  /** Simulations the helpers ran. */
  get helperSimulations(): number {
    return Atomics.load(this.v.ctrl, SIMS)
  }

  evaluate(ms: MultipleShootingProblem, w: Float64Array, r: Float64Array, jac: Float64Array | null): boolean {
    const v = this.v
    const nSeg = ms.segments.length
    v.w.set(w)
    v.mu[0] = ms.mu
    v.lambda.set(ms.lambda)
    v.scale.set(ms.stateScale)
    if (jac) v.jac.fill(0)
    v.ctrl[WITHJAC] = jac ? 1 : 0
    Atomics.store(v.ctrl, FAIL, 0)
    const g = ++this.gen
    const target = (this.done += nSeg)
    Atomics.store(v.ctrl, NEXT, g * (nSeg + 64))
    Atomics.store(v.ctrl, GEN, g)
    Atomics.notify(v.ctrl, GEN)
    let thrown: unknown = null
    try {
      work(ms, v, g, true)
    } catch (e) {
      thrown = e
      work(ms, v, g, false) // hand out what is left as failed, so that the count completes
    }
    for (let d = Atomics.load(v.ctrl, DONE); d < target; d = Atomics.load(v.ctrl, DONE)) Atomics.wait(v.ctrl, DONE, d, 50)
    if (thrown) throw thrown
    r.set(v.r)
    if (jac) jac.set(v.jac)
    ms.defects.set(v.defects)
    return Atomics.load(v.ctrl, FAIL) === 0
  }

  /** Tells the helpers to end. */
  close(): void {
    Atomics.store(this.v.ctrl, STOP, 1)
    Atomics.notify(this.v.ctrl, GEN)
  }
}

/**
 * A helper thread's loop: waits for evaluations on `buffer` and evaluates segments of each with its own
 * copy of the problem, until the fit's thread closes the block. Returns the segments it evaluated.
 */
export function serveSegments(ms: MultipleShootingProblem, buffer: SharedArrayBuffer): number {
  const v = views(ms, buffer)
  let seen = 0
  let total = 0
  while (Atomics.load(v.ctrl, STOP) === 0) {
    const g = Atomics.load(v.ctrl, GEN)
    if (g === seen) {
      Atomics.wait(v.ctrl, GEN, seen, 1000)
      continue
    }
    seen = g
    ms.mu = v.mu[0]
    ms.lambda.set(v.lambda)
    ms.stateScale.set(v.scale)
    const before = ms.base.simulations
    try {
      total += work(ms, v, g, true)
    } catch {
      // the failure is recorded in the block; keep serving
    }
    Atomics.add(v.ctrl, SIMS, ms.base.simulations - before)
  }
  return total
}
