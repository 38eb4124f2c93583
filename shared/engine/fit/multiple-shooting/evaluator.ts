/**
 * Spreading one evaluation's segments over helpers (threads, processes) by plain message passing.
 *
 * The segments of a multiple-shooting evaluation are independent simulations (problem.ts). A host may
 * inject a SegmentEvaluator: a set of helper "lanes", each holding its own copy of the segmented
 * problem (built once by `buildSegmentProblem` from the same sheet, parts, data and options). For each
 * evaluation the fit's thread cuts the segments into contiguous blocks of about equal sample counts,
 * sends one block to each ready lane — (w = parameters and segment initial states, the penalty weight,
 * multipliers and defect scales, the segment indices) — evaluates its own block meanwhile, and merges
 * the replies: the residual rows, scaled defects and Jacobian rows of each block's segments.
 *
 * Each segment's numbers come from the same arithmetic in whichever copy of the problem evaluates it,
 * so the merged residual and Jacobian are bitwise those of the in-thread evaluation, whatever the
 * number of lanes. This module is pure TypeScript; the transport (worker threads) is the host's.
 */
import type { CompiledModel } from '../../../sheet/compiled'
import { simulate } from '../../simulate'
import { FitAborted, FitTimeout } from '../lsq'
import { makeProblem, type FitOptions } from '../driver'
import type { ProblemSpec } from '../problem'
import { MultipleShootingProblem } from './problem'

/** What a helper needs to build the fit's segmented problem (structured-cloneable). */
export interface SegmentSetup {
  sheet: string
  /** part texts keyed `handle@version` (shared/sheet/parts.ts partsResolver) */
  parts?: Record<string, string>
  spec: ProblemSpec
  options: Pick<FitOptions, 'rtol' | 'atol' | 'solver' | 'maxSteps'>
  segments: { segments?: number; segmentLength?: number }
  /** absolute deadline (Date.now()) of the fit, when it has a time budget */
  deadline?: number
}

/** The shape a helper's problem must have to serve a fit (checked once a helper is up). */
export interface SegmentShape {
  n: number
  m: number
  segments: number
}

/** One block of one evaluation, fit thread → helper. */
export interface SegmentBatch {
  /** evaluation number: a reply to an older evaluation is dropped */
  id: number
  w: Float64Array
  mu: number
  lambda: Float64Array
  stateScale: Float64Array
  withJac: boolean
  /** segment indices of this block */
  segments: Int32Array
}

/**
 * A block's rows, helper → fit thread (the arrays are transferable). Rows and Jacobian columns are
 * implicit: segment by segment (the batch's order), its output rows then its defect rows; per row the
 * columns a segment can touch (the parameters, its own initial state, its successor's).
 */
export interface SegmentRows {
  id: number
  ok: boolean
  /** the engine's message when a segment could not be simulated */
  error: string | null
  /** the fit's time budget ran out or the helper was stopped inside a simulation */
  interrupted: 'aborted' | 'time-budget' | null
  simulations: number
  r: Float64Array
  /** scaled defect per row (NaN on output rows) */
  defects: Float64Array
  /** with the Jacobian: each row's entries in its segment's columns */
  jac: Float64Array | null
}

/** Helper lanes offered by the host for one fit. */
export interface SegmentEvaluator {
  /** helpers up and checked so far (lanes 0 … ready − 1); an evaluation uses these and the fit's thread */
  readonly ready: number
  /** helpers still starting for this fit: while any is, the fit yields to the event loop once per evaluation to hear from them */
  readonly starting: number
  evaluate(lane: number, batch: SegmentBatch): Promise<SegmentRows>
  close(): Promise<void>
}

/** The host's factory, called once the fit knows its segment count; null: evaluate in the fit's thread. */
export type SegmentEvaluatorFactory = (fit: { segments: number; shape: SegmentShape; deadline: number | undefined }) => SegmentEvaluator | null

/** The segmented problem a helper serves, from its setup and the sheet it compiled once. */
export function buildSegmentProblem(model: CompiledModel, setup: SegmentSetup): MultipleShootingProblem {
  const base = makeProblem(model, setup.spec, simulate, setup.options, setup.deadline)
  return new MultipleShootingProblem(base, setup.segments, setup.spec.bounds)
}

export function shapeOf(ms: MultipleShootingProblem): SegmentShape {
  return { n: ms.n, m: ms.m, segments: ms.segmentCount }
}

/** Rows a segment writes: its output rows and its defect rows. */
function forEachRow(ms: MultipleShootingProblem, s: number, f: (row: number) => void): void {
  const seg = ms.segments[s]
  const offset = ms.base.experiments[seg.experiment].obs.offset
  for (let i = seg.obs0; i < seg.obs1; i++) f(offset + i)
  if (seg.dRow >= 0) for (let j = 0; j < ms.base.model.nx; j++) f(ms.mOut + seg.dRow + j)
}

/** Columns of w a segment's rows can depend on: θ, its own initial state, its successor's initial state. */
function columnsOf(ms: MultipleShootingProblem, s: number): Int32Array {
  const seg = ms.segments[s]
  const nx = ms.base.model.nx
  const cols: number[] = []
  for (let q = 0; q < ms.nTheta; q++) cols.push(q)
  if (seg.sCol >= 0) for (let j = 0; j < nx; j++) cols.push(seg.sCol + j)
  if (seg.nextCol >= 0) for (let j = 0; j < nx; j++) cols.push(seg.nextCol + j)
  return Int32Array.from(cols)
}

/** Sizes of a block's reply: rows, and Jacobian entries. */
function blockSize(ms: MultipleShootingProblem, cols: Int32Array[], segments: Int32Array): { rows: number; entries: number } {
  let rows = 0
  let entries = 0
  for (const s of segments) {
    const seg = ms.segments[s]
    const k = seg.obs1 - seg.obs0 + (seg.dRow >= 0 ? ms.base.model.nx : 0)
    rows += k
    entries += k * cols[s].length
  }
  return { rows, entries }
}

/** Each segment's columns, computed once per problem. */
const columnCache = new WeakMap<MultipleShootingProblem, Int32Array[]>()
function segmentColumns(ms: MultipleShootingProblem): Int32Array[] {
  let c = columnCache.get(ms)
  if (!c) {
    c = ms.segments.map((_, s) => columnsOf(ms, s))
    columnCache.set(ms, c)
  }
  return c
}

/**
 * A helper's side: evaluates the block's segments with its own problem and packs their rows. Uses the
 * problem's full-size buffers (allocated once); the reply's arrays are new, to be transferred.
 */
export class SegmentServer {
  private readonly r: Float64Array
  private readonly jac: Float64Array
  private readonly defects: Float64Array
  private readonly cols: Int32Array[]

  constructor(readonly ms: MultipleShootingProblem) {
    this.r = new Float64Array(ms.m)
    this.jac = new Float64Array(ms.m * ms.n)
    this.defects = new Float64Array(ms.nDefects)
    this.cols = segmentColumns(ms)
  }

  serve(b: SegmentBatch): SegmentRows {
    const ms = this.ms
    const m = ms.m
    ms.mu = b.mu
    ms.lambda.set(b.lambda)
    ms.stateScale.set(b.stateScale)
    ms.base.lastError = null
    const sims0 = ms.base.simulations
    const size = blockSize(ms, this.cols, b.segments)
    const jac = b.withJac ? this.jac : null
    const reply = (ok: boolean, interrupted: SegmentRows['interrupted']): SegmentRows => ({
      id: b.id, ok, error: ok ? null : ms.base.lastError, interrupted, simulations: ms.base.simulations - sims0,
      r: new Float64Array(ok ? size.rows : 0), defects: new Float64Array(ok ? size.rows : 0), jac: null,
    })
    let ok = true
    try {
      for (const s of b.segments) {
        if (jac) { const cols = this.cols[s]; forEachRow(ms, s, (row) => { for (const c of cols) jac[c * m + row] = 0 }) }
        if (!ms.evaluateSegment(s, b.w, this.r, jac, this.defects)) { ok = false; break }
      }
    } catch (e) {
      if (e instanceof FitAborted) return reply(false, 'aborted')
      if (e instanceof FitTimeout) return reply(false, 'time-budget')
      ms.base.lastError = e instanceof Error ? e.message : String(e)
      ok = false
    }
    const out = reply(ok, null)
    if (!ok) return out
    const oj = jac ? new Float64Array(size.entries) : null
    out.jac = oj
    let k = 0
    let e = 0
    for (const s of b.segments) {
      const cols = this.cols[s]
      forEachRow(ms, s, (row) => {
        out.r[k] = this.r[row]
        out.defects[k] = row >= ms.mOut ? this.defects[row - ms.mOut] : NaN
        k++
        if (oj) for (const c of cols) oj[e++] = jac![c * m + row]
      })
    }
    return out
  }
}

/** Contiguous blocks of segments with about equal sample counts, one per lane (some may be empty). */
export function splitSegments(ms: MultipleShootingProblem, lanes: number): Int32Array[] {
  const nSeg = ms.segmentCount
  const weight = (s: number) => ms.segments[s].k1 - ms.segments[s].k0 + 1
  let total = 0
  for (let s = 0; s < nSeg; s++) total += weight(s)
  const blocks: Int32Array[] = []
  let s = 0
  let done = 0
  for (let l = 0; l < lanes; l++) {
    const target = ((l + 1) * total) / lanes
    const from = s
    while (s < nSeg && (l === lanes - 1 || done + weight(s) / 2 <= target)) done += weight(s++)
    blocks.push(Int32Array.from({ length: s - from }, (_, k) => from + k))
  }
  return blocks
}

/** Copies a helper's rows of the block `segments` into the fit thread's residual, Jacobian (column-major) and defects. */
export function mergeRows(ms: MultipleShootingProblem, segments: Int32Array, rows: SegmentRows, r: Float64Array, jac: Float64Array | null): void {
  const m = ms.m
  const all = segmentColumns(ms)
  let k = 0
  let e = 0
  for (const s of segments) {
    const cols = all[s]
    forEachRow(ms, s, (row) => {
      r[row] = rows.r[k]
      if (row >= ms.mOut) ms.defects[row - ms.mOut] = rows.defects[k]
      k++
      if (jac && rows.jac) for (const c of cols) jac[c * m + row] = rows.jac[e++]
    })
  }
}

/** An evaluator whose lanes are SegmentServers in this thread: for hosts without threads, and tests. */
export class InThreadEvaluator implements SegmentEvaluator {
  private readonly servers: SegmentServer[]
  constructor(model: CompiledModel, setup: SegmentSetup, lanes: number) {
    this.servers = Array.from({ length: lanes }, () => new SegmentServer(buildSegmentProblem(model, setup)))
  }
  get ready() { return this.servers.length }
  readonly starting = 0
  async evaluate(lane: number, batch: SegmentBatch): Promise<SegmentRows> {
    return this.servers[lane].serve(batch)
  }
  async close() {}
}
