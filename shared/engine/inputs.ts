/**
 * Input traces: interpolation (linear or hold), breakpoints, delayed reads.
 *
 * Slot layout follows the compiled model (shared/sheet/compiled.ts): slots 0..nu-1 are the inputs,
 * slot nu+k is input `delays[k].input` read at t − d_k with d_k = tau_k / secondsPerTimeUnit (tau is
 * in seconds, internal units; t in sheet time units).
 *
 * Rules:
 * - linear: straight line between samples; hold: the value of the last sample at or before t.
 * - before the first sample the first value holds; past the last sample the last value holds and a
 *   warning is added. A delayed read before t0 takes the value at t0 (the first value when the trace
 *   starts at or after t0).
 * - every sample time (and, for a delayed slot, every sample time + d) is a breakpoint: the engine
 *   integrates segment by segment and evaluates the right-hand side with the segment's own
 *   interpolation formula up to and including its right end (left limit at a jump), so a hold step
 *   is resolved exactly without restarting the solver.
 * - ∂u(t − d)/∂tau = −u'(t − d)/secondsPerTimeUnit: the slope of the interval for linear traces,
 *   zero inside the intervals of hold traces and outside the trace. The jumps of a delayed hold trace
 *   move with tau: simulate.ts applies the matching jump of the state sensitivities there.
 */
import type { CompiledModel } from '../sheet/compiled'
import type { InputTrace } from './simulate-contract'
import { InputTraceError, fmt } from './errors'

interface Slot {
  name: string
  hold: boolean
  trace: InputTrace | null
  value: number
  /** delay in sheet time units (0 for a direct input) */
  shift: number
  delayed: boolean
  /** interval index of the current segment: i with t_i <= tq < t_{i+1}; -1 before the first sample */
  idx: number
  /** the current segment reads a delayed slot before t0 (clamped to t0) */
  clamped: boolean
}

export class InputSet {
  readonly nSlots: number
  private slots: Slot[] = []
  readonly hasHold: boolean
  readonly hasTraces: boolean
  private t0 = 0
  /** the caller's traces array: the key of the breakpoint cache */
  private readonly owner: object | null

  constructor(model: CompiledModel, traces: readonly (InputTrace | null | undefined)[] | undefined) {
    this.owner = traces ?? null
    const nu = model.nu
    const tr: (InputTrace | null)[] = []
    for (let i = 0; i < nu; i++) tr.push(traces?.[i] ?? null)
    if (traces && traces.length > nu) {
      throw new InputTraceError(`#${nu + 1}`, null, `the model has ${nu} input(s) but ${traces.length} traces were given`)
    }
    const slot = (input: number, delayed: boolean): Slot => {
      const info = model.inputs[input]
      return { name: info.name, hold: info.interp === 'hold', trace: tr[input], value: info.value, shift: 0, delayed, idx: -1, clamped: false }
    }
    for (let i = 0; i < nu; i++) {
      if (tr[i] !== null && !validated.has(tr[i] as InputTrace)) {
        validateTrace(model.inputs[i].name, tr[i] as InputTrace)
        validated.add(tr[i] as InputTrace)
      }
      this.slots.push(slot(i, false))
    }
    for (let k = 0; k < model.nd; k++) this.slots.push(slot(model.delays[k].input, true))
    this.nSlots = this.slots.length
    this.hasHold = this.slots.some((s) => s.trace !== null && s.hold)
    this.hasTraces = this.slots.some((s) => s.trace !== null)
  }

  /** set the delays from the parameter vector; returns warnings about traces not covering [t0, tEnd] */
  prepare(model: CompiledModel, p: Float64Array, t0: number, tEnd: number): string[] {
    this.t0 = t0
    const warnings: string[] = []
    for (let k = 0; k < model.nd; k++) {
      const d = model.delays[k]
      const tau = d.param === null ? d.constValue : p[d.param]
      if (!(tau >= 0) || !Number.isFinite(tau)) {
        throw new InputTraceError(model.inputs[d.input].name, null, `delay must be a finite value >= 0, got ${tau} s`)
      }
      this.slots[model.nu + k].shift = tau / model.secondsPerTimeUnit
    }
    for (const s of this.slots) {
      s.idx = -1
      if (s.trace === null || s.delayed) continue
      const tt = s.trace.t
      const last = tt[tt.length - 1]
      if (tEnd > last) warnings.push(`input '${s.name}': trace ends at t = ${fmt(last)}; its last value is held to t = ${fmt(tEnd)}`)
      if (tt[0] > t0) warnings.push(`input '${s.name}': trace starts at t = ${fmt(tt[0])}, after t0 = ${fmt(t0)}; its first value is held before that`)
    }
    return warnings
  }

  /**
   * Sorted distinct breakpoints strictly inside (t0, tEnd). Each trace's times are already sorted
   * (validated), and a constant shift keeps them sorted, so the slots' times are merged in one linear
   * pass into a typed array (no sort, no growing array). The answer is cached on the traces array for
   * the same (t0, tEnd, shifts): the simulations of one experiment during a fit build it once.
   */
  breakpoints(t0: number, tEnd: number): Float64Array {
    const key = breakpointKey(t0, tEnd, this.slots)
    const owner = this.owner
    if (owner) {
      const hit = breakpointCache.get(owner)
      if (hit && hit.key === key && hit.traces.every((t, k) => t === this.slots[k].trace)) return hit.points
    }
    const points = mergeBreakpoints(this.slots, t0, tEnd)
    if (owner) breakpointCache.set(owner, { key, traces: this.slots.map((s) => s.trace), points })
    return points
  }

  /** slot s at time t reads before t0 (a delayed slot early on): it is held at its value at t0 */
  private beforeStart(s: Slot, t: number): boolean {
    return s.delayed && t - s.shift < this.t0
  }

  /** the trace time slot s reads at time t: t less its delay, not before t0 */
  private readTime(s: Slot, t: number): number {
    return this.beforeStart(s, t) ? this.t0 : t - s.shift
  }

  /** fix every slot's interval for the segment containing tMid (strictly inside it) */
  setSegment(tMid: number): void {
    for (const s of this.slots) {
      if (s.trace === null) continue
      s.clamped = this.beforeStart(s, tMid)
      s.idx = locate(s.trace.t, this.readTime(s, tMid), s.idx)
    }
  }

  /** values for the current segment at time t (the segment's formula, also at its ends) */
  eval(t: number, u: Float64Array): void {
    const slots = this.slots
    for (let k = 0; k < slots.length; k++) {
      const s = slots[k]
      u[k] = s.trace === null ? s.value : valueIn(s.trace, s.idx, this.readTime(s, t), s.hold)
    }
  }

  /** du/dt of each slot in the current segment (0 for hold and outside a trace) */
  slope(du: Float64Array): void {
    const slots = this.slots
    for (let k = 0; k < slots.length; k++) {
      const s = slots[k]
      du[k] = s.trace === null || s.hold || s.clamped ? 0 : slopeIn(s.trace, s.idx)
    }
  }

  /** values and slopes at an exact time t (right-continuous: at a sample time, that sample's interval) */
  evalAt(t: number, u: Float64Array, du: Float64Array | null): void {
    const slots = this.slots
    for (let k = 0; k < slots.length; k++) {
      const s = slots[k]
      const tr = s.trace
      if (tr === null) {
        u[k] = s.value
        if (du) du[k] = 0
        continue
      }
      const q = this.readTime(s, t)
      const i = locate(tr.t, q, -1)
      u[k] = valueIn(tr, i, q, s.hold)
      if (du) du[k] = s.hold || this.beforeStart(s, t) ? 0 : slopeIn(tr, i)
    }
  }

  /** slot k reads a measured trace (not the sheet's constant value) */
  hasTrace(k: number): boolean {
    return this.slots[k].trace !== null
  }

  /** slot k is a hold trace (piecewise constant) */
  isHoldTrace(k: number): boolean {
    const s = this.slots[k]
    return s.trace !== null && s.hold
  }

  /** which slots depend on parameter j through their delay (for ∂/∂tau), as slot indices */
  delaySlotsOf(model: CompiledModel, j: number): number[] {
    const out: number[] = []
    for (let k = 0; k < model.nd; k++) if (model.delays[k].param === j) out.push(model.nu + k)
    return out
  }

  /** whether slot k's delayed read lies before t0 at time t (then ∂/∂tau is 0) */
  clampedAt(k: number, t: number): boolean {
    const s = this.slots[k]
    return s.delayed && t - s.shift < this.t0
  }
}

/** traces already checked (a fit simulates the same traces many times); traces are not mutated afterwards */
const validated = new WeakSet<InputTrace>()
/** last breakpoints per traces array */
const breakpointCache = new WeakMap<object, { key: string; traces: (InputTrace | null)[]; points: Float64Array }>()

function breakpointKey(t0: number, tEnd: number, slots: readonly Slot[]): string {
  let k = `${t0}|${tEnd}`
  for (const s of slots) k += `|${s.trace === null ? '-' : s.shift}`
  return k
}

/**
 * k-way merge of sorted streams, de-duplicated, keeping only values strictly inside (t0, tEnd): each
 * slot's sample times plus its shift, and for a delayed slot the single value t0 + shift (its clamped
 * start). Linear in the number of samples times the (small) number of streams.
 */
function mergeBreakpoints(slots: readonly Slot[], t0: number, tEnd: number): Float64Array {
  const times: Float64Array[] = []
  const shifts: number[] = []
  for (const s of slots) {
    if (s.trace === null) continue
    times.push(s.trace.t)
    shifts.push(s.shift)
    if (s.delayed) {
      times.push(Float64Array.of(t0))
      shifts.push(s.shift)
    }
  }
  let total = 0
  for (const t of times) total += t.length
  const out = new Float64Array(total)
  const pos = new Int32Array(times.length)
  const ns = times.length
  let count = 0
  let prev = t0
  while (true) {
    let best = -1
    let bv = Infinity
    for (let k = 0; k < ns; k++) {
      const tt = times[k]
      if (pos[k] < tt.length) {
        const v = tt[pos[k]] + shifts[k]
        if (v < bv) {
          bv = v
          best = k
        }
      }
    }
    if (best < 0 || !(bv < tEnd)) break
    pos[best]++
    if (bv > t0 && bv - prev > 1e-13 * Math.max(1, Math.abs(bv))) {
      out[count++] = bv
      prev = bv
    }
  }
  return out.slice(0, count)
}

function validateTrace(name: string, tr: InputTrace): void {
  const n = tr.t.length
  if (n === 0) throw new InputTraceError(name, null, 'the trace has no samples')
  if (tr.v.length !== n) throw new InputTraceError(name, null, `${n} sample times but ${tr.v.length} values`)
  for (let i = 0; i < n; i++) {
    const ti = tr.t[i]
    if (!Number.isFinite(ti)) throw new InputTraceError(name, i + 1, `sample time is ${ti}`)
    if (i > 0 && !(ti > tr.t[i - 1])) {
      throw new InputTraceError(name, i + 1, `sample times must increase: t = ${fmt(ti)} follows t = ${fmt(tr.t[i - 1])}`)
    }
    const v = tr.v[i]
    if (Number.isNaN(v)) throw new InputTraceError(name, i + 1, `value is NaN at t = ${fmt(ti)}`)
    if (!Number.isFinite(v)) throw new InputTraceError(name, i + 1, `value is ${v} at t = ${fmt(ti)}`)
  }
}

/** largest i with t[i] <= q (−1 when q < t[0]); `hint` is the previous answer */
function locate(t: Float64Array, q: number, hint: number): number {
  const n = t.length
  if (q < t[0]) return -1
  if (q >= t[n - 1]) return n - 1
  if (hint >= 0 && hint < n - 1) {
    if (t[hint] <= q && q < t[hint + 1]) return hint
    if (hint + 2 < n && t[hint + 1] <= q && q < t[hint + 2]) return hint + 1
  }
  let lo = 0
  let hi = n - 1
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1
    if (t[mid] <= q) lo = mid
    else hi = mid
  }
  return lo
}

function valueIn(tr: InputTrace, i: number, q: number, hold: boolean): number {
  const v = tr.v
  if (i < 0) return v[0]
  const n = v.length
  if (i >= n - 1) return v[n - 1]
  if (hold) return v[i]
  const t = tr.t
  return v[i] + ((q - t[i]) * (v[i + 1] - v[i])) / (t[i + 1] - t[i])
}

function slopeIn(tr: InputTrace, i: number): number {
  const n = tr.v.length
  if (i < 0 || i >= n - 1) return 0
  return (tr.v[i + 1] - tr.v[i]) / (tr.t[i + 1] - tr.t[i])
}
