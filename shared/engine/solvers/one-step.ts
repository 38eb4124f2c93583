/**
 * The bookkeeping every one-step method repeats: the current point, the last step's interval for
 * dense output, counters, tolerances and limits, (re)starting, the advance loop, and around each
 * step attempt the limit checks, the size of the attempt, a rejection and the move to an accepted
 * step's end. A method adds its work arrays (`alloc`), what it carries from step to step (`reset`),
 * and `step`/`dense`.
 */
import { checkLimits, checkStepSize, clipStep, NonFiniteSeen, nextStep, stepEnd } from './control'
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
  /** the attempt being made: the step size it wanted, and whether it was cut short to land on tStop */
  protected hWanted = 0
  protected clipped = false

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

  /**
   * Starts an attempt from t: checks the limits and returns its step size, the fixed step or h, cut
   * to land exactly on tStop when it comes within 1 % of it (sets hWanted and clipped).
   */
  protected attempt(tStop: number): number {
    const { limits, t } = this
    checkLimits(limits, this.counters, t)
    const hWanted = limits.fixedStep > 0 ? limits.fixedStep : this.h
    const h = clipStep(t, hWanted, tStop)
    this.hWanted = hWanted
    this.clipped = h < hWanted
    checkStepSize(t, h, this.nonFinite, limits, this.sys.nBlock)
    return h
  }

  /** the attempt was rejected: the next one tries hNext */
  protected reject(hNext: number): void {
    this.counters.rejected++
    this.lastRejected = true
    this.h = hNext
  }

  /**
   * The attempt [t, t + h] was accepted (the method has its result in z): t moves to the step's end,
   * exactly tStop when it was aimed at it, and the next step tries hNew (no growth right after a
   * rejection, see control.ts nextStep).
   */
  protected moveOn(t: number, h: number, tStop: number, hNew: number): void {
    this.counters.steps++
    this.nonFinite.at = -1
    this.tOld = t
    this.t = stepEnd(t, h, tStop, this.clipped)
    this.hLast = this.t - t
    this.h = nextStep(hNew, h, this.hWanted, this.clipped, this.lastRejected)
    this.lastRejected = false
  }

  /** before any accepted step the dense output is the current point: writes it and says so */
  protected denseAtStart(out: Float64Array): boolean {
    if (this.hLast !== 0) return false
    out.set(this.z.subarray(0, this.n))
    return true
  }

  advance(tStop: number, obs: StepObserver | null): void {
    while (this.t < tStop) {
      this.step(tStop)
      if (obs !== null) obs(this.tOld, this.t)
    }
  }
}
