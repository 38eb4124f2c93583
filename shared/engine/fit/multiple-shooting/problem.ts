/**
 * The multiple-shooting least-squares problem built on an ordinary fit problem (../problem.ts).
 *
 * Each experiment's record is cut into segments (segments.ts). Segment 0 starts at the experiment's
 * t0 from its ordinary initial state; segment i ≥ 1 starts at its first sample time from an unknown
 * state s_i (all nx states). The unknowns are w = [θ, s_{e,1}, …, s_{e,M_e−1} for each experiment e].
 * Each segment is simulated on its own (independent simulations) with forward sensitivities
 * ∂x/∂(p, s_i) from the engine, so the Jacobian is block-sparse (stored dense here).
 *
 * The continuity conditions h_{e,i}(w) = x_{e,i}(t_{e,i+1}; s_i, p) − s_{i+1} = 0 enter through the
 * augmented Lagrangian of the constrained least-squares problem (J. Nocedal & S. J. Wright, Numerical
 * Optimization, 2nd ed., Springer 2006, Sec. 17.3, Framework 17.3):
 *
 *   L_A(w) = ‖r(w)‖² + λᵀĥ(w) + μ‖ĥ(w)‖² = ‖r(w)‖² + ‖√μ·ĥ(w) + λ/(2√μ)‖² − ‖λ‖²/(4μ)
 *
 * with ĥ_j = h_j / σ_j scaled by a typical magnitude σ_j of state j. Minimising L_A over w is an
 * ordinary bounded least-squares problem with the stacked residual [r; √μ·ĥ + λ/(2√μ)], which the
 * bounded Levenberg–Marquardt (../lm.ts) solves with the exact Jacobian.
 *
 * Residual layout: rows 0..m_out−1 are the weighted output errors in the ordinary problem's order (so
 * ‖r‖² at a continuous trajectory equals the single-shooting cost); then one block of nx defect rows per
 * segment that has a successor.
 */
import type { CompiledModel } from '../../../sheet/compiled'
import type { LsqProblem } from '../lsq'
import type { FitProblem, PreparedExperiment } from '../problem'
import { segmentStarts, type SegmentRequest } from './segments'
import { FitAborted, FitTimeout, yieldToEventLoop } from '../lsq'
import { mergeRows, splitSegments, type Segment } from './layout'
import type { SegmentEvaluator, SegmentRows } from './lanes'

export class MultipleShootingProblem implements LsqProblem {
  readonly n: number
  readonly m: number
  readonly mOut: number
  readonly nTheta: number
  readonly nDefects: number
  readonly lower: Float64Array
  readonly upper: Float64Array
  readonly names: string[]
  readonly segments: Segment[]
  /** per experiment, the first sample index of each segment */
  readonly starts: Int32Array[]
  /** typical magnitude of each state, scaling the defects */
  readonly stateScale: Float64Array
  /** penalty weight μ and multiplier estimates λ (one per defect row) */
  mu = 1
  readonly lambda: Float64Array
  /** scaled defects ĥ at the last evaluation */
  readonly defects: Float64Array
  /** helpers that evaluate blocks of segments (evaluator.ts); null: all in this thread */
  evaluator: SegmentEvaluator | null = null
  /** simulations the helpers ran */
  private helperSims = 0
  private evaluation = 0
  private readonly model: CompiledModel
  private readonly pBuf: Float64Array
  private readonly xBuf: Float64Array

  /** `bounds`: the fit's bound overrides (internal units); a state's bounds hold for its segment nodes */
  constructor(readonly base: FitProblem, req: SegmentRequest, bounds: Record<string, [number, number]> = {}) {
    const model = base.model
    this.model = model
    const nx = model.nx
    this.nTheta = base.n
    this.mOut = base.m
    this.starts = base.experiments.map((ex) => segmentStarts(ex.tOut, req, ex.data.source ?? ex.data.name))
    const segments: Segment[] = []
    let col = base.n
    let row = 0
    const names = [...base.names]
    const lower: number[] = Array.from(base.lower)
    const upper: number[] = Array.from(base.upper)
    const allStates = Array.from({ length: nx }, (_, j) => j)
    base.experiments.forEach((ex, e) => {
      const st = this.starts[e]
      const M = st.length
      const nT = ex.tOut.length
      let obs = 0
      for (let i = 0; i < M; i++) {
        const k0 = st[i]
        const k1 = i + 1 < M ? st[i + 1] : nT
        const last = i + 1 === M
        // output times: the segment's samples, then the next segment's first sample for the defect
        const tOut = ex.tOut.slice(k0, last ? k1 : k1 + 1)
        const prep: PreparedExperiment = i === 0
          ? { ...ex, tOut }
          : { ...ex, t0: ex.tOut[k0], tOut, sensStates: allStates }
        const obs0 = obs
        while (obs < ex.obs.count && ex.obs.tIdx[obs] < k1) obs++
        const sCol = i === 0 ? -1 : col
        if (i > 0) {
          model.states.forEach((s) => {
            names.push(`${s.name}@${ex.data.name}:${ex.tOut[k0]}`)
            lower.push(bounds[s.name]?.[0] ?? s.lower ?? -Infinity)
            upper.push(bounds[s.name]?.[1] ?? s.upper ?? Infinity)
          })
          col += nx
        }
        segments.push({ experiment: e, index: i, k0, k1, prep, obs0, obs1: obs, sCol, dRow: last ? -1 : row, nextCol: -1 })
        if (!last) row += nx
      }
    })
    // successor columns
    for (let s = 0; s + 1 < segments.length; s++) {
      if (segments[s].dRow >= 0) segments[s].nextCol = segments[s + 1].sCol
    }
    this.segments = segments
    this.n = col
    this.nDefects = row
    this.m = base.m + row
    this.lower = Float64Array.from(lower)
    this.upper = Float64Array.from(upper)
    this.names = names
    this.lambda = new Float64Array(row)
    this.defects = new Float64Array(row)
    this.stateScale = new Float64Array(nx).fill(1)
    this.pBuf = new Float64Array(model.np)
    this.xBuf = new Float64Array(model.nx)
  }

  get simulations(): number {
    return this.base.simulations + this.helperSims
  }

  /** Number of segments over all experiments. */
  get segmentCount(): number {
    return this.segments.length
  }

  /** Largest |ĥ| of the last evaluation (0 with a single segment). */
  maxDefect(): number {
    let d = 0
    for (let i = 0; i < this.defects.length; i++) d = Math.max(d, Math.abs(this.defects[i]))
    return d
  }

  /** ‖r_out‖² of a stacked residual vector: the output part of the cost. */
  outputCost(r: Float64Array): number {
    let s = 0
    for (let i = 0; i < this.mOut; i++) s += r[i] * r[i]
    return s
  }

  evaluate(w: Float64Array, r: Float64Array, jac: Float64Array | null): boolean {
    if (jac) jac.fill(0)
    for (let s = 0; s < this.segments.length; s++) {
      if (!this.evaluateSegment(s, w, r, jac, this.defects)) return false
    }
    return true
  }

  /**
   * The same evaluation with the segments spread over the evaluator's ready helpers and this thread
   * (evaluator.ts): blocks go out first, this thread evaluates the first block meanwhile, the replies
   * are merged. Without an evaluator or a ready helper it is `evaluate`.
   */
  async evaluateAsync(w: Float64Array, r: Float64Array, jac: Float64Array | null): Promise<boolean> {
    const ev = this.evaluator
    if (ev && ev.starting > 0) await yieldToEventLoop()
    const helpers = ev ? Math.min(ev.ready, this.segments.length - 1) : 0
    if (!ev || helpers <= 0) return this.evaluate(w, r, jac)
    const id = ++this.evaluation
    const blocks = splitSegments(this, helpers + 1)
    // a helper that is lost (its thread ended) rejects: its block is then evaluated here
    const replies: Promise<SegmentRows | Int32Array>[] = []
    const sent: Int32Array[] = []
    for (let l = 1; l <= helpers; l++) {
      if (!blocks[l].length) continue
      sent.push(blocks[l])
      replies.push(ev.evaluate(l - 1, {
        id, w: Float64Array.from(w), mu: this.mu, lambda: Float64Array.from(this.lambda), stateScale: Float64Array.from(this.stateScale),
        withJac: jac !== null, segments: blocks[l],
      }).catch(() => blocks[l]))
    }
    if (jac) jac.fill(0)
    let ok = true
    let thrown: unknown = null
    try {
      for (const s of blocks[0]) if (!(ok = this.evaluateSegment(s, w, r, jac, this.defects))) break
    } catch (e) {
      thrown = e
    }
    const got = await Promise.all(replies)
    if (thrown) throw thrown
    let interrupted: SegmentRows['interrupted'] = null
    for (let b = 0; b < got.length; b++) {
      const rows = got[b]
      if (rows instanceof Int32Array) {
        for (const s of rows) if (ok && !(ok = this.evaluateSegment(s, w, r, jac, this.defects))) break
        continue
      }
      this.helperSims += rows.simulations
      if (rows.interrupted) interrupted = rows.interrupted
      else if (!rows.ok) {
        if (ok) this.base.lastError = rows.error
        ok = false
      } else mergeRows(this, sent[b], rows, r, jac)
    }
    if (interrupted === 'aborted') throw new FitAborted()
    if (interrupted === 'time-budget') throw new FitTimeout()
    return ok
  }

  /**
   * One segment: its output residual rows, its defect rows (and scaled defects) and, with `jac`, its
   * entries of the Jacobian (the others are left untouched: the caller zeroes `jac` once).
   */
  evaluateSegment(s: number, w: Float64Array, r: Float64Array, jac: Float64Array | null, defects: Float64Array): boolean {
    const seg = this.segments[s]
    const base = this.base
    const model = this.model
    const nx = model.nx
    const ny = model.ny
    const m = this.m
    const sqrtMu = Math.sqrt(this.mu)
    const ex = base.experiments[seg.experiment]
    const hasX0 = base.fillExperiment(w, seg.experiment, this.pBuf, this.xBuf)
    let x0: Float64Array | undefined
    if (seg.index === 0) x0 = hasX0 ? this.xBuf : undefined
    else {
      for (let j = 0; j < nx; j++) this.xBuf[j] = w[seg.sCol + j]
      x0 = this.xBuf
    }
    const res = base.simulateExperiment(seg.prep, this.pBuf, x0, jac !== null)
    if (!res) return false
    const nP = seg.prep.sensParams.length
    const ns = nP + seg.prep.sensStates.length
    if (jac && ns > 0 && !res.dy) {
      base.lastError = 'the simulation returned no sensitivities'
      return false
    }
    // output residuals of the segment's samples
    const { tIdx, oIdx, y, sqrtW, offset } = ex.obs
    const yh = res.y
    for (let i = seg.obs0; i < seg.obs1; i++) {
      const row = (tIdx[i] - seg.k0) * ny + oIdx[i]
      r[offset + i] = sqrtW[i] * (yh[row] - y[i])
      if (!jac) continue
      const dy = res.dy!
      for (let q = 0; q < this.nTheta; q++) {
        const c = this.columnOf(seg, ex, q)
        if (c >= 0) jac[q * m + offset + i] = sqrtW[i] * dy[row * ns + c]
      }
      if (seg.sCol >= 0) {
        for (let j = 0; j < nx; j++) jac[(seg.sCol + j) * m + offset + i] = sqrtW[i] * dy[row * ns + nP + j]
      }
    }
    // continuity defect at the segment's end
    if (seg.dRow < 0) return true
    const kEnd = seg.k1 - seg.k0
    for (let j = 0; j < nx; j++) {
      const h = (res.x[kEnd * nx + j] - w[seg.nextCol + j]) / this.stateScale[j]
      const d = seg.dRow + j
      defects[d] = h
      r[this.mOut + d] = sqrtMu * h + this.lambda[d] / (2 * sqrtMu)
      if (!jac) continue
      const dx = res.dx!
      const f = sqrtMu / this.stateScale[j]
      const rowIdx = this.mOut + d
      const at = (kEnd * nx + j) * ns
      for (let q = 0; q < this.nTheta; q++) {
        const c = this.columnOf(seg, ex, q)
        if (c >= 0) jac[q * m + rowIdx] = f * dx[at + c]
      }
      if (seg.sCol >= 0) for (let jj = 0; jj < nx; jj++) jac[(seg.sCol + jj) * m + rowIdx] = f * dx[at + nP + jj]
      jac[(seg.nextCol + j) * m + rowIdx] = -f
    }
    return true
  }

  /** Sensitivity column of estimated quantity q in a segment's simulation, or −1. */
  private columnOf(seg: Segment, ex: PreparedExperiment, q: number): number {
    const c = ex.sensCol[q]
    if (c < 0 || seg.index === 0) return c
    // later segments start from s_i: an estimated initial state of the record does not act on them
    return c < seg.prep.sensParams.length ? c : -1
  }

  /**
   * Starting segment states: a measured output that is a state gives that state at the segment's
   * first sample; other states come from a single-shooting pass at θ (or the sheet's initial value
   * where that pass fails). Clamped to the states' bounds. Also sets the defect scales.
   */
  initialNodes(theta: ArrayLike<number>): Float64Array {
    const base = this.base
    const model = this.model
    const nx = model.nx
    const ny = model.ny
    const w = new Float64Array(this.n)
    for (let q = 0; q < this.nTheta; q++) w[q] = theta[q]
    const stateOfOutput = outputStateMap(model)
    const scale = new Float64Array(nx)
    const p = new Float64Array(model.np)
    const x0 = new Float64Array(nx)
    base.experiments.forEach((ex, e) => {
      const hasX0 = base.fillExperiment(w, e, p, x0)
      let pass: Float64Array | null = null
      try {
        const res = base.simulateExperiment(ex, p, hasX0 ? x0 : undefined, false)
        if (res && res.x.every(Number.isFinite)) pass = res.x
        if (res) for (let j = 0; j < nx; j++) scale[j] = Math.max(scale[j], Math.abs(res.x0[j]))
      } catch (err) {
        if (err instanceof Error && (err.name === 'FitAborted' || err.name === 'FitTimeout')) throw err
      }
      for (const seg of this.segments) {
        if (seg.experiment !== e || seg.sCol < 0) continue
        for (let j = 0; j < nx; j++) {
          let v = pass ? pass[seg.k0 * nx + j] : model.states[j].initial
          for (let o = 0; o < ny; o++) {
            if (stateOfOutput[o] !== j) continue
            const meas = ex.data.outputs[model.outputs[o].name]?.[ex.timeIndex[seg.k0]]
            if (meas !== undefined && Number.isFinite(meas)) v = meas
          }
          v = Math.min(this.upper[seg.sCol + j], Math.max(this.lower[seg.sCol + j], v))
          w[seg.sCol + j] = v
          scale[j] = Math.max(scale[j], Math.abs(v))
        }
      }
    })
    const first = this.segments.find((s) => s.sCol >= 0)
    for (let j = 0; j < nx; j++) {
      const range = first ? (this.upper[first.sCol + j] - this.lower[first.sCol + j]) * 1e-3 : 0
      this.stateScale[j] = scale[j] > 0 ? scale[j] : range > 0 && Number.isFinite(range) ? range : 1
    }
    return w
  }
}

/**
 * For each output, the state it equals (y_o = x_j exactly, no parameter or input acting), or −1.
 * Decided from the compiled output map at two unrelated points.
 */
export function outputStateMap(model: CompiledModel): Int32Array {
  const nx = model.nx
  const map = new Int32Array(model.ny).fill(-1)
  const u = new Float64Array(model.nu + model.nd)
  const p = Float64Array.from(model.params, (q) => q.value)
  const probes = [Float64Array.from({ length: nx }, (_, j) => 1.37 + 0.71 * j), Float64Array.from({ length: nx }, (_, j) => -2.9 + 3.13 * j * j)]
  const ys = probes.map((x) => {
    const y = new Float64Array(model.ny)
    try {
      model.outputsFn(0, x, p, u, y)
    } catch {
      y.fill(NaN)
    }
    return y
  })
  const gx = new Float64Array(model.ny * nx)
  const gp = new Float64Array(model.ny * model.np)
  const gu = new Float64Array(Math.max(1, model.ny * (model.nu + model.nd)))
  try {
    model.dgdx(0, probes[0], p, u, gx)
    model.dgdp(0, probes[0], p, u, gp)
    if (model.nu + model.nd > 0) model.dgdu(0, probes[0], p, u, gu)
  } catch {
    return map
  }
  for (let o = 0; o < model.ny; o++) {
    for (let j = 0; j < nx; j++) {
      if (!ys.every((y, k) => y[o] === probes[k][j])) continue
      let clean = gx[o * nx + j] === 1
      for (let jj = 0; jj < nx && clean; jj++) if (jj !== j && gx[o * nx + jj] !== 0) clean = false
      for (let k = 0; k < model.np && clean; k++) if (gp[o * model.np + k] !== 0) clean = false
      for (let k = 0; k < model.nu + model.nd && clean; k++) if (gu[o * (model.nu + model.nd) + k] !== 0) clean = false
      if (clean) {
        map[o] = j
        break
      }
    }
  }
  return map
}
