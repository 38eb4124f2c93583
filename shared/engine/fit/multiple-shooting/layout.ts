/**
 * Where a segment's rows and columns sit in the multiple-shooting residual and Jacobian (problem.ts
 * lays them out), and the block bookkeeping built on that: cutting an evaluation's segments into
 * blocks for helper lanes and merging a block's rows back (evaluator.ts). Reads the layout through
 * `SegmentLayout`, which MultipleShootingProblem satisfies.
 */
import type { PreparedExperiment } from '../problem'
import type { SegmentRows } from './lanes'

export interface Segment {
  experiment: number
  /** index of the segment within its experiment */
  index: number
  /** first sample index (into the experiment's tOut) and one past its last */
  k0: number
  k1: number
  /** the experiment seen by this segment's simulation (t0, output times, sensitivities) */
  prep: PreparedExperiment
  /** first observation of the segment in the experiment's observation list, and one past the last */
  obs0: number
  obs1: number
  /** column of s_i's first state in w, −1 for segment 0 */
  sCol: number
  /** row of the first defect row at the segment's end, −1 for an experiment's last segment */
  dRow: number
  /** column of the successor's s in w, −1 when none */
  nextCol: number
}

/** What the row bookkeeping reads of a segmented problem (MultipleShootingProblem). */
export interface SegmentLayout {
  /** residual rows: output rows then defect rows */
  readonly m: number
  /** output rows */
  readonly mOut: number
  readonly nTheta: number
  readonly segmentCount: number
  readonly segments: readonly Segment[]
  /** scaled defects ĥ at the last evaluation */
  readonly defects: Float64Array
  readonly base: { readonly experiments: readonly { readonly obs: { readonly offset: number } }[]; readonly model: { readonly nx: number } }
}

/** Rows a segment writes: its output rows and its defect rows. */
export function forEachRow(ms: SegmentLayout, s: number, f: (row: number) => void): void {
  const seg = ms.segments[s]
  const offset = ms.base.experiments[seg.experiment].obs.offset
  for (let i = seg.obs0; i < seg.obs1; i++) f(offset + i)
  if (seg.dRow >= 0) for (let j = 0; j < ms.base.model.nx; j++) f(ms.mOut + seg.dRow + j)
}

/** Columns of w a segment's rows can depend on: θ, its own initial state, its successor's initial state. */
function columnsOf(ms: SegmentLayout, s: number): Int32Array {
  const seg = ms.segments[s]
  const nx = ms.base.model.nx
  const cols: number[] = []
  for (let q = 0; q < ms.nTheta; q++) cols.push(q)
  if (seg.sCol >= 0) for (let j = 0; j < nx; j++) cols.push(seg.sCol + j)
  if (seg.nextCol >= 0) for (let j = 0; j < nx; j++) cols.push(seg.nextCol + j)
  return Int32Array.from(cols)
}

/** Sizes of a block's reply: rows, and Jacobian entries. */
export function blockSize(ms: SegmentLayout, cols: Int32Array[], segments: Int32Array): { rows: number; entries: number } {
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
const columnCache = new WeakMap<SegmentLayout, Int32Array[]>()
export function segmentColumns(ms: SegmentLayout): Int32Array[] {
  let c = columnCache.get(ms)
  if (!c) {
    c = ms.segments.map((_, s) => columnsOf(ms, s))
    columnCache.set(ms, c)
  }
  return c
}

/** Contiguous blocks of segments with about equal sample counts, one per lane (some may be empty). */
export function splitSegments(ms: SegmentLayout, lanes: number): Int32Array[] {
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
export function mergeRows(ms: SegmentLayout, segments: Int32Array, rows: SegmentRows, r: Float64Array, jac: Float64Array | null): void {
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
