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
import { makeProblem, type FitOptions } from '../options'
import type { ProblemSpec } from '../problem'
import { MultipleShootingProblem } from './problem'
import type { SegmentBatch, SegmentEvaluator, SegmentRows, SegmentShape } from './lanes'
import { blockSize, forEachRow, segmentColumns } from './layout'

export type { SegmentShape, SegmentBatch, SegmentRows, SegmentEvaluator, SegmentEvaluatorFactory } from './lanes'
export { splitSegments, mergeRows } from './layout'

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

/** The segmented problem a helper serves, from its setup and the sheet it compiled once. */
export function buildSegmentProblem(model: CompiledModel, setup: SegmentSetup): MultipleShootingProblem {
  const base = makeProblem(model, setup.spec, simulate, setup.options, setup.deadline)
  return new MultipleShootingProblem(base, setup.segments, setup.spec.bounds)
}

export function shapeOf(ms: MultipleShootingProblem): SegmentShape {
  return { n: ms.n, m: ms.m, segments: ms.segmentCount }
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
