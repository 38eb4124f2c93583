/**
 * odex: the GBS extrapolation method of the `odex` package (a port of E. Hairer's ODEX), wrapped to
 * the engine's solver interface, for high accuracy on smooth non-stiff problems.
 *
 * Reference: E. Hairer, S. P. Nørsett, G. Wanner, Solving Ordinary Differential Equations I, 2nd ed.
 * 1993, Sec. II.9 (extrapolation of the explicit midpoint rule, order and step-size control) and
 * the ODEX code of its appendix; dense output from Hairer & Ostermann, "Dense output for
 * extrapolation methods", Numer. Math. 58 (1990) 419–439.
 *
 * The package drives its own step loop and allocates arrays internally (an accepted exception to
 * the no-allocation rule). `advance` runs one package call per segment between breakpoints and
 * carries the last step size into the next call as its initial step, so a breakpoint does not
 * trigger a fresh step-size search. Error control: the package scales by atol + rtol·|z|
 * component-wise; a sensitivity component gets atol = (atol_i + rtol_i·|x_i|)/weight and rtol 0, the
 * closest match to the engine's rule (see types.ts), and weight 0 switches it off (atol 1e300).
 */
import { AbortedError, StepLimitError, TimeBudgetError } from '../errors'
import { firstNonFinite, throwNonFinite } from './control'
import { Outcome, Solver } from './odex-lib'
import { OneStepSolver } from './one-step'
import { now, type StepObserver } from './types'

export class OdexSolver extends OneStepSolver {
  readonly name = 'odex'
  private zin: Float64Array = new Float64Array(0)
  private dz: Float64Array = new Float64Array(0)
  private denseFn: ((c: number, x: number) => number) | null = null
  private solver: Solver | null = null

  protected alloc(n: number): void {
    if (this.n === n) return
    this.n = n
    this.z = new Float64Array(n)
    this.zin = new Float64Array(n)
    this.dz = new Float64Array(n)
    this.solver = new Solver(n)
  }

  protected reset(): void {
    this.denseFn = null
  }

  breakpoint(): void {
    // each segment is a separate package call; nothing is carried over but the step size
  }

  private configure(): Solver {
    const s = this.solver as Solver
    const { n, tol, sys } = this
    const nb = sys.nBlock
    const atol: number[] = new Array(n)
    const rtol: number[] = new Array(n)
    for (let k = 0; k < n; k++) {
      const i = k % nb
      const w = tol.weight[k]
      if (k < nb) {
        atol[k] = w === 0 ? 1e300 : tol.atol[i] / w
        rtol[k] = w === 0 ? 0 : tol.rtol[i]
      } else {
        atol[k] = w === 0 ? 1e300 : (tol.atol[i] + tol.rtol[i] * Math.abs(this.z[i])) / w
        rtol[k] = 0
      }
    }
    s.absoluteTolerance = atol
    s.relativeTolerance = rtol
    s.denseOutput = true
    s.maxSteps = Math.max(1, this.limits.maxSteps - this.counters.steps - this.counters.rejected)
    s.initialStepSize = this.h > 0 ? this.h : 1e-4
    return s
  }

  private run(tStop: number, obs: StepObserver | null, single: boolean): void {
    const s = this.configure()
    const { sys, n, zin, dz, counters, limits } = this
    // the package copies the returned array at once, so one array serves every call
    const ret: number[] = new Array<number>(n).fill(0)
    const f = (x: number, y: number[]): number[] => {
      // the package checks nothing between evaluations: abort and time budget are checked here
      // too, so a long run of rejected steps cannot outlast them
      if ((counters.rhsEvals & 63) === 0) {
        if (limits.signal !== null && limits.signal.aborted) throw new AbortedError(x)
        if (limits.deadline !== Infinity && now() > limits.deadline) throw new TimeBudgetError(limits.budgetMs, x)
      }
      for (let i = 0; i < n; i++) zin[i] = y[i]
      sys.f(x, zin, dz)
      counters.rhsEvals++
      const bad = firstNonFinite(dz, n)
      if (bad >= 0) throwNonFinite(limits, sys.nBlock, bad, x, dz[bad])
      for (let i = 0; i < n; i++) ret[i] = dz[i]
      return ret
    }
    let accepted = 0
    const solOut = (nr: number, xOld: number, x: number, y: number[], dense?: (c: number, x: number) => number): boolean | void => {
      if (nr === 1) return
      accepted++
      counters.steps++
      for (let i = 0; i < n; i++) this.z[i] = y[i]
      this.t = x
      this.h = x - xOld
      this.denseFn = dense ?? null
      if (limits.signal !== null && limits.signal.aborted) throw new AbortedError(x)
      if (limits.deadline !== Infinity && (counters.steps & 15) === 0 && now() > limits.deadline) throw new TimeBudgetError(limits.budgetMs, x)
      if (counters.steps + counters.rejected >= limits.maxSteps) throw new StepLimitError(limits.maxSteps, x)
      if (obs !== null) obs(xOld, x)
      if (single) return false
    }
    const y0 = Array.from(this.z)
    const res = s.solve(f, this.t, y0, tStop, solOut)
    counters.rejected += res.nReject
    if (res.outcome === Outcome.MaxStepsExceeded) throw new StepLimitError(limits.maxSteps, this.t)
    if (accepted === 0 && res.outcome === Outcome.Converged) {
      this.t = tStop
      for (let i = 0; i < n; i++) this.z[i] = res.y[i]
    }
    if (!single) this.t = tStop
  }

  step(tStop: number): void {
    this.run(tStop, null, true)
  }

  advance(tStop: number, obs: StepObserver | null): void {
    if (this.t >= tStop) return
    this.run(tStop, obs, false)
  }

  dense(t: number, out: Float64Array): void {
    const fn = this.denseFn
    if (fn === null) {
      out.set(this.z)
      return
    }
    for (let i = 0; i < this.n; i++) out[i] = fn(i, t)
  }
}
