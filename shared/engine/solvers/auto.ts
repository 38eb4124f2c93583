/**
 * auto: starts with rk45 and switches to the stiff method (RODAS4, rosenbrock.ts) when rk45's
 * step-size control shows stiffness.
 *
 * Stiffness tests (rk45.ts, `stiffnessTest`): after each accepted step the dominant eigenvalue's
 * size ρ is estimated from the two last stages, which share the time t + h (Hairer, Nørsett &
 * Wanner, Solving ODEs I, 2nd ed. 1993, Sec. II.10, "Stiffness detection", as in their dopri5 code):
 *     h·ρ ≈ h · ‖f(y₁) − f(y₆)‖ / ‖y₁ − y₆‖      (state block only)
 * The problem counts as stiff when h·ρ exceeds 3.25 (the Dormand–Prince stability region ends near
 * −3.3 on the real axis) on 15 accepted steps without 6 calmer steps in between (dopri5's test), or
 * when h·ρ stays above 0.6 of that bound on 25 of the last 30 steps: the step size is then held by
 * stability, not accuracy. The stiff method takes over from the current point and step size. There
 * is no switch back; `switched` and `switchedAt` report it.
 */
import { Rk45 } from './rk45'
import { Rosenbrock } from './rosenbrock'
import { newCounters, type OdeSolver, type OdeSystem, type SolverLimits, type StepObserver, type Tolerances, type SolverCounters } from './types'

export class AutoSolver implements OdeSolver {
  readonly name = 'auto'
  readonly nonstiff = new Rk45()
  readonly stiffSolver = new Rosenbrock()
  private active: Rk45 | Rosenbrock = this.nonstiff
  private sum = newCounters()
  private limits!: SolverLimits
  /** the step just taken was rk45's last: its dense output stays with rk45 until the next step */
  private pendingDense = false
  switched = false
  /** time of the switch, when it happened */
  switchedAt: number | null = null

  get t(): number {
    return this.active.t
  }
  get z(): Float64Array {
    return this.active.z
  }
  get h(): number {
    return this.active.h
  }
  get counters(): SolverCounters {
    const a = this.nonstiff.counters
    const b = this.switched ? this.stiffSolver.counters : null
    const s = this.sum
    s.steps = a.steps + (b ? b.steps : 0)
    s.rejected = a.rejected + (b ? b.rejected : 0)
    s.rhsEvals = a.rhsEvals + (b ? b.rhsEvals : 0)
    s.jacEvals = a.jacEvals + (b ? b.jacEvals : 0)
    s.luDecomps = a.luDecomps + (b ? b.luDecomps : 0)
    return s
  }

  start(sys: OdeSystem, tol: Tolerances, limits: SolverLimits, t: number, z: Float64Array, h: number): void {
    this.active = this.nonstiff
    this.switched = false
    this.switchedAt = null
    this.nonstiff.start(sys, tol, limits, t, z, h)
    this.stiffSolver.attach(sys, tol, { ...limits })
    this.limits = limits
  }

  breakpoint(): void {
    this.active.breakpoint()
  }

  restartAt(t: number, z: Float64Array, h: number): void {
    this.active.restartAt(t, z, h)
    this.pendingDense = false
  }

  step(tStop: number): void {
    this.active.step(tStop)
    if (!this.switched && this.nonstiff.stiff) {
      this.switched = true
      this.switchedAt = this.nonstiff.t
      const sl = this.stiffSolver
      // the stiff method's step limit is what is left of the common one
      const left = this.limits.maxSteps - this.nonstiff.counters.steps - this.nonstiff.counters.rejected
      sl.setLimits({ ...this.limits, maxSteps: Math.max(1, left) })
      sl.restartAt(this.nonstiff.t, this.nonstiff.z, this.nonstiff.h)
      this.active = sl
      this.pendingDense = true
    } else {
      this.pendingDense = false
    }
  }

  advance(tStop: number, obs: StepObserver | null): void {
    while (this.t < tStop) {
      const t0 = this.t
      this.step(tStop)
      if (obs !== null) obs(t0, this.t)
    }
  }

  dense(t: number, out: Float64Array): void {
    if (this.pendingDense) this.nonstiff.dense(t, out)
    else this.active.dense(t, out)
  }
}
