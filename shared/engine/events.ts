/**
 * Events of a sheet during a simulation: where a condition h = A − B crosses zero in its direction,
 * the state and mode assignments there, the jumps of the forward sensitivities, and chattering.
 *
 * Location. After each accepted step [a, b] every condition is evaluated at b; one that has crossed
 * (from > 0 to <= 0 for `falls below`, from < 0 to >= 0 for `rises above`, either for `crosses`) is
 * located on the solver's continuous extension (dense output) by the Anderson–Björck variant of
 * regula falsi: N. Anderson, Å. Björck, "A new high order method of regula falsi type for computing
 * a root of an equation", BIT 13 (1973) 253–264 (the Illinois halving of M. Dowell, P. Jarratt,
 * BIT 11 (1971) 168–174, when its factor is not positive). The bracket is shrunk to a few units in
 * the last place of t, so the event time is as accurate as the dense output, i.e. the solver's
 * tolerance; the earliest crossing of the step wins, the solver restarts there (the step is cut at
 * the event, never taken to its end). Crossings that come and go inside one step are not seen (an
 * even number of sign changes), as with every method that samples the condition per step.
 * Right after an event a condition that sits at zero (within the location tolerance) is given the
 * side its slope dh/dt leaves it for, and in the next step a crossing back is bracketed by halving
 * towards the event time: a bouncing ball whose next arc lies inside one step is still caught.
 *
 * Jumps of the sensitivities s = ∂x/∂θ at an event τ with h(τ, x(τ), θ) = 0 and x⁺ = r(τ, x⁻, θ)
 * (P. I. Barton, "Sensitivities at discontinuities": J. R. Galán, W. F. Feehery, P. I. Barton,
 * "Parametric sensitivity functions for hybrid discrete/continuous systems", Appl. Numer. Math. 31
 * (1999) 17–47, eqs. (27)–(30); I. A. Hiskens, M. A. Pai, "Trajectory sensitivity analysis of hybrid
 * systems", IEEE Trans. Circuits Syst. I 47 (2000) 204–220, eqs. (14)–(16)):
 *     dτ/dθ = −(h_x s⁻ + h_θ) / (h_x f⁻ + h_t)
 *     s⁺    = r_x s⁻ + r_θ + (r_x f⁻ + r_t − f⁺) dτ/dθ
 * with f⁻ = f(τ, x⁻) in the modes before and f⁺ = f(τ, x⁺) in the modes after the event; h_t and
 * r_t include the inputs' slopes, and a delay parameter acts through its delayed input slots as in
 * system.ts. A crossing with h_x f⁻ + h_t = 0 (the condition only touches zero) has no defined dτ/dθ:
 * the run warns and takes dτ/dθ = 0.
 *
 * Chattering: CHATTER_RUN events in a row, each within CHATTER_GAP·(run length) of the one before,
 * stop the run with a ChatteringError naming the events (a switch without hysteresis, or a ball
 * coming to rest: infinitely many events in finite time).
 *
 * All work arrays are allocated once per model and sensitivity layout; an event appends one entry
 * to the result's event list.
 */
import type { CompiledModel } from '../sheet/compiled'
import { ChatteringError, fmt } from './errors'
import type { InputSet } from './inputs'
import type { ModelSystem } from './system'
import type { OdeSolver } from './solvers/types'

/** events in a row closer than the gap that count as chattering */
export const CHATTER_RUN = 20
/** the gap, as a fraction of the simulated time span */
export const CHATTER_GAP = 1e-9
const EPS = Number.EPSILON

export interface SimulationEvent {
  /** the event time (sheet time units) */
  t: number
  /** the event's index in the sheet and its line */
  event: number
  line: number
  /** event-time sensitivities dτ/dθ in the run's sensitivity order (null without sensitivities) */
  dt: Float64Array | null
}

export class EventMonitor {
  private readonly model: CompiledModel
  private readonly sys: ModelSystem
  private inputs!: InputSet
  private readonly ne: number
  private readonly nx: number
  private readonly np: number
  private readonly nuu: number
  private readonly hPrev: Float64Array
  private readonly hNew: Float64Array
  private readonly hTmp: Float64Array
  /** the side (+1/−1) a condition leaves zero for, in the first step after an event; 0 otherwise */
  private readonly depart: Int8Array
  private readonly fired: Uint8Array
  private readonly zt: Float64Array
  private readonly u: Float64Array
  private readonly du: Float64Array
  private readonly hx: Float64Array
  private readonly hp: Float64Array
  private readonly hu: Float64Array
  private readonly ht: Float64Array
  private readonly rx: Float64Array
  private readonly rp: Float64Array
  private readonly ru: Float64Array
  private readonly rt: Float64Array
  private readonly fm: Float64Array
  private readonly fp: Float64Array
  private readonly xp: Float64Array
  private readonly tmp: Float64Array
  private readonly dtau: Float64Array
  private gapTol = 0
  private lastT = -Infinity
  private run = 0
  private runStart = 0
  private readonly runEvents: Int32Array
  log: SimulationEvent[] = []
  warnings: string[] = []

  constructor(model: CompiledModel, sys: ModelSystem) {
    this.model = model
    this.sys = sys
    const ne = (this.ne = model.ne)
    const nx = (this.nx = model.nx)
    const np = (this.np = model.np)
    const nuu = (this.nuu = model.nu + model.nd)
    const one = (k: number) => new Float64Array(Math.max(1, k))
    this.hPrev = one(ne); this.hNew = one(ne); this.hTmp = one(ne)
    this.depart = new Int8Array(Math.max(1, ne)); this.fired = new Uint8Array(Math.max(1, ne))
    this.zt = one(sys.n)
    this.u = one(nuu); this.du = one(nuu)
    this.hx = one(ne * nx); this.hp = one(ne * np); this.hu = one(ne * nuu); this.ht = one(ne)
    this.rx = one(nx * nx); this.rp = one(nx * np); this.ru = one(nx * nuu); this.rt = one(nx)
    this.fm = one(nx); this.fp = one(nx); this.xp = one(nx); this.tmp = one(nx)
    this.dtau = one(sys.ns)
    this.runEvents = new Int32Array(CHATTER_RUN)
  }

  /** a new run from (t0, z) up to tEnd: modes at their initial positions, conditions evaluated */
  begin(inputs: InputSet, t0: number, tEnd: number, z: Float64Array): void {
    this.inputs = inputs
    resetModes(this.model)
    this.gapTol = CHATTER_GAP * Math.max(tEnd - t0, 0)
    this.lastT = -Infinity
    this.run = 0
    this.log = []
    this.warnings = []
    this.depart.fill(0)
    this.cond(t0, z, this.hPrev)
  }

  private cond(t: number, z: Float64Array, out: Float64Array): void {
    this.inputs.eval(t, this.u)
    this.model.eventFns!.h(t, z, this.sys.p, this.u, out)
  }

  private crossed(k: number, before: number, after: number): boolean {
    const d = this.model.events[k].direction
    if (before > 0 && after <= 0) return d !== 'up'
    if (before < 0 && after >= 0) return d !== 'down'
    return false
  }

  /**
   * After the solver's step [a, b]: the earliest event time in (a, b], or Infinity when no condition
   * crossed (then the conditions at b become the reference for the next step).
   */
  locate(solver: OdeSolver, a: number, b: number): number {
    const { ne, hPrev, hNew, hTmp, depart, zt } = this
    this.cond(b, solver.z, hNew)
    let te = Infinity
    for (let k = 0; k < ne; k++) {
      const d = depart[k]
      if (d === 0) {
        if (this.crossed(k, hPrev[k], hNew[k])) te = Math.min(te, this.root(k, solver, a, hPrev[k], b, hNew[k]))
        continue
      }
      if (!this.crossed(k, d, hNew[k])) continue
      // the condition left zero at a towards side d: halve towards a until it is seen on that side
      let hi = b, fhi = hNew[k]
      for (let i = 1; i <= 60; i++) {
        const c = a + (b - a) * Math.pow(0.5, i)
        if (!(c > a)) break
        solver.dense(c, zt)
        this.cond(c, zt, hTmp)
        const fc = hTmp[k]
        if (fc * d > 0) { te = Math.min(te, this.root(k, solver, c, fc, hi, fhi)); break }
        hi = c; fhi = fc
      }
    }
    if (te === Infinity) {
      hPrev.set(hNew)
      depart.fill(0)
    }
    return te
  }

  /** Anderson–Björck regula falsi on [a, b] (fa on the side before the crossing, fb after it): the first time on the far side */
  private root(k: number, solver: OdeSolver, a: number, fa: number, b: number, fb: number): number {
    const { zt, hTmp } = this
    const sgn = fa > 0 ? 1 : -1
    const tol = 4 * EPS * Math.max(Math.abs(a), Math.abs(b))
    let side = 0
    for (let it = 0; it < 200 && b - a > tol; it++) {
      let c = (a * fb - b * fa) / (fb - fa)
      if (!(c > a && c < b)) c = 0.5 * (a + b)
      if (!(c > a && c < b)) break
      solver.dense(c, zt)
      this.cond(c, zt, hTmp)
      const fc = hTmp[k]
      if (fc * sgn <= 0) {
        if (fc === 0) return c
        const m = 1 - fc / fb
        b = c; fb = fc
        if (side === -1) fa *= m > 0 ? m : 0.5
        side = -1
      } else {
        const m = 1 - fc / fa
        a = c; fa = fc
        if (side === 1) fb *= m > 0 ? m : 0.5
        side = 1
      }
    }
    return b
  }

  /**
   * Fire every event whose condition has crossed by te (in sheet order): z (the dense solution at
   * te, with sensitivities) is changed in place to the state just after the event.
   */
  fire(te: number, z: Float64Array): void {
    const { ne, hPrev, hTmp, depart, fired, model } = this
    this.cond(te, z, hTmp)
    fired.fill(0)
    let any = false
    for (let k = 0; k < ne; k++) {
      const before = depart[k] !== 0 ? depart[k] : hPrev[k]
      if (this.crossed(k, before, hTmp[k])) { fired[k] = 1; any = true }
    }
    if (!any) {
      // the located crossing lies on the far side by construction; rounding may still hide it
      let best = 0
      for (let k = 1; k < ne; k++) if (Math.abs(hTmp[k]) < Math.abs(hTmp[best])) best = k
      fired[best] = 1
    }
    // a condition left at zero by an event that now moves to its far side fires at the same time
    // (a switch without hysteresis: the chattering check ends the run if this never settles)
    for (;;) {
      for (let k = 0; k < ne; k++) {
        if (!fired[k]) continue
        this.jump(k, te, z)
        this.chatter(k, te)
        this.log.push({ t: te, event: k, line: model.events[k].line, dt: this.sys.ns > 0 ? this.dtau.slice(0, this.sys.ns) : null })
      }
      this.rearm(te, z)
      let again = false
      for (let k = 0; k < ne; k++) {
        const d = depart[k]
        const dir = model.events[k].direction
        const go = !fired[k] && d !== 0 && (dir === 'either' || (dir === 'down' ? d < 0 : d > 0))
        fired[k] = go ? 1 : 0
        if (go) again = true
      }
      if (!again) return
    }
  }

  /** the assignments of event k at t with the sensitivities' jumps (z in place) */
  private jump(k: number, t: number, z: Float64Array): void {
    const { model, sys, nx, np, nuu, u, du, hx, hp, hu, ht, rx, rp, ru, rt, fm, fp, xp, tmp, dtau } = this
    const ef = model.eventFns!
    const rs = ef.resets[k]
    const p = sys.p
    const ns = sys.ns
    const spt = model.secondsPerTimeUnit
    this.inputs.eval(t, u)
    this.inputs.slope(du)
    if (ns > 0) {
      model.rhs(t, z, p, u, fm)
      ef.dhdx(t, z, p, u, hx)
      ef.dhdp(t, z, p, u, hp)
      ef.dhdt(t, z, p, u, ht)
      if (nuu > 0) ef.dhdu(t, z, p, u, hu)
      let D = ht[k]
      for (let i = 0; i < nx; i++) D += hx[k * nx + i] * fm[i]
      for (let q = 0; q < nuu; q++) D += hu[k * nuu + q] * du[q]
      const ok = D !== 0 && Number.isFinite(D)
      if (!ok && this.warnings.length < 10) this.warnings.push(`the condition of the event at line ${model.events[k].line} only touches zero at t = ${fmt(t)}: sensitivities across it take its time as fixed`)
      for (let j = 0; j < ns; j++) {
        const sj = sys.sens[j]
        const off = (j + 1) * nx
        let num = sj.param >= 0 ? hp[k * np + sj.param] : 0
        for (let i = 0; i < nx; i++) num += hx[k * nx + i] * z[off + i]
        for (let q = 0; q < sj.delaySlots.length; q++) { const sl = sj.delaySlots[q]; num -= (hu[k * nuu + sl] * du[sl]) / spt }
        dtau[j] = ok ? -num / D : 0
      }
      rs.dx(t, z, p, u, rx)
      rs.dp(t, z, p, u, rp)
      rs.dt(t, z, p, u, rt)
      if (nuu > 0) {
        rs.du(t, z, p, u, ru)
        for (let i = 0; i < nx; i++) for (let q = 0; q < nuu; q++) rt[i] += ru[i * nuu + q] * du[q]
      }
    }
    rs.x(t, z, p, u, xp)
    const mv = model.modeValues
    for (const m of model.events[k].modes) mv[m.mode] = m.value
    if (ns > 0) {
      model.rhs(t, xp, p, u, fp)
      for (let j = 0; j < ns; j++) {
        const sj = sys.sens[j]
        const off = (j + 1) * nx
        const dt = dtau[j]
        for (let i = 0; i < nx; i++) {
          const r = i * nx
          let acc = sj.param >= 0 ? rp[i * np + sj.param] : 0
          let rf = rt[i] - fp[i]
          for (let q = 0; q < nx; q++) { acc += rx[r + q] * z[off + q]; rf += rx[r + q] * fm[q] }
          for (let q = 0; q < sj.delaySlots.length; q++) { const sl = sj.delaySlots[q]; acc -= (ru[i * nuu + sl] * du[sl]) / spt }
          tmp[i] = acc + rf * dt
        }
        for (let i = 0; i < nx; i++) z[off + i] = tmp[i]
      }
    }
    for (let i = 0; i < nx; i++) z[i] = xp[i]
  }

  /**
   * The conditions just after an event at t: one that sits at zero (within what the location can
   * tell apart) takes the side its slope leaves for; the others keep their value.
   */
  private rearm(t: number, z: Float64Array): void {
    const { model, sys, ne, nx, nuu, hPrev, depart, u, du, hx, ht, hu, fp } = this
    const ef = model.eventFns!
    const p = sys.p
    this.cond(t, z, hPrev)
    this.inputs.slope(du)
    model.rhs(t, z, p, u, fp)
    ef.dhdx(t, z, p, u, hx)
    ef.dhdt(t, z, p, u, ht)
    if (nuu > 0) ef.dhdu(t, z, p, u, hu)
    const dtTol = 64 * EPS * Math.max(Math.abs(t), 1)
    for (let k = 0; k < ne; k++) {
      let slope = ht[k]
      for (let i = 0; i < nx; i++) slope += hx[k * nx + i] * fp[i]
      for (let q = 0; q < nuu; q++) slope += hu[k * nuu + q] * du[q]
      depart[k] = Math.abs(hPrev[k]) <= Math.abs(slope) * dtTol && slope !== 0 ? (slope > 0 ? 1 : -1) : 0
    }
  }

  private chatter(k: number, t: number): void {
    if (t - this.lastT <= this.gapTol) {
      if (this.run === 0) this.runStart = this.lastT
      this.runEvents[this.run % CHATTER_RUN] = k
      this.run++
    } else {
      this.run = 0
    }
    this.lastT = t
    if (this.run >= CHATTER_RUN) {
      const lines = [...new Set(Array.from(this.runEvents))].sort((a, b) => a - b).map((e) => this.model.events[e])
      throw new ChatteringError(CHATTER_RUN, this.runStart, t, lines.map((e) => `line ${e.line} (${e.text})`))
    }
  }
}

/** every mode back at its initial position */
export function resetModes(model: CompiledModel): void {
  for (let i = 0; i < model.nm; i++) model.modeValues[i] = model.modes[i].initial
}
