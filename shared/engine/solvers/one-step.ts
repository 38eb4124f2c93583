/**
 * The bookkeeping every one-step method repeats: the current point, the last step's interval for
 * dense output, counters, tolerances and limits, (re)starting and the advance loop. A method adds
 * its work arrays (`alloc`), what it carries from step to step (`reset`), and `step`/`dense`.
 */
import { NonFiniteSeen } from './control'
import { newCounters, resetCounters, type OdeSolver, type OdeSystem, type SolverLimits, type StepObserver, type Tolerances } from './types'

export abstract class OneStepSolver implements OdeSolver {
  abstract readonly name: string
  readonly counters = newCounters()
  t = 0
  h = 0
  z: Float64Array = new Float64Array(0)
  protected sys!: OdeSystem
  protected tol!: Tolerances
  protected limits!: SolverLimits
  /** components of the system the work arrays are sized for */
  protected n = 0
  /** the last accepted step is [tOld, t], of length hLast (0: none yet) */
  protected tOld = 0
  protected hLast = 0
  protected lastRejected = false
  protected readonly nonFinite = new NonFiniteSeen()

  /** size the work arrays (and `z`) for n components in blocks of nBlock; sets `n` */
  protected abstract alloc(n: number, nBlock: number): void
  /** forget what is carried from step to step (a fresh start at the current point) */
  protected abstract reset(): void
  abstract breakpoint(): void
  abstract step(tStop: number): void
  abstract dense(t: number, out: Float64Array): void

  start(sys: OdeSystem, tol: Tolerances, limits: SolverLimits, t: number, z: Float64Array, h: number): void {
    this.attach(sys, tol, limits)
    this.restartAt(t, z, h)
  }

  /** take on a system, tolerances and limits; counters start from zero */
  attach(sys: OdeSystem, tol: Tolerances, limits: SolverLimits): void {
    this.alloc(sys.n, sys.nBlock)
    this.sys = sys
    this.tol = tol
    this.limits = limits
    resetCounters(this.counters)
  }

  /** continue from (t, z) keeping the counters (used when `auto` hands over to this method) */
  restartAt(t: number, z: Float64Array, h: number): void {
    this.t = t
    this.tOld = t
    this.z.set(z.subarray(0, this.n))
    this.h = h
    this.hLast = 0
    this.lastRejected = false
    this.reset()
  }

  setLimits(limits: SolverLimits): void {
    this.limits = limits
  }

  advance(tStop: number, obs: StepObserver | null): void {
    while (this.t < tStop) {
      this.step(tStop)
      if (obs !== null) obs(this.tOld, this.t)
    }
  }
}
