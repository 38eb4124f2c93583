import type { ConvergenceTest, FitStatus } from '../../api/fit'
import type { LiveSegmentLine } from '../../api/runs'

/** A bounded least-squares problem as the optimisers see it: minimise ‖r(θ)‖² over lower ≤ θ ≤ upper. */
export interface LsqProblem {
  /** number of parameters */
  n: number
  /** number of residuals */
  m: number
  lower: Float64Array
  upper: Float64Array
  names: string[]
  /**
   * Residuals into r (length m) and, when jac is given, ∂r/∂θ into jac (column-major, jac[j*m + i]).
   * Returns false when the model cannot be evaluated there (failed or blown-up simulation).
   */
  evaluate(theta: Float64Array, r: Float64Array, jac: Float64Array | null): boolean
  /** the same evaluation, when it may wait for other threads (multiple shooting's segment helpers) */
  evaluateAsync?(theta: Float64Array, r: Float64Array, jac: Float64Array | null): Promise<boolean>
  /** the engine's message for the last evaluation that failed (e.g. "step size too small at t = 1.2") */
  failure?(): string | null
}

export type StopStatus = FitStatus

export interface ProgressInfo {
  iteration: number
  cost: number
  parameters: number[]
  start?: number
  /** the residual at this iteration (the optimiser's buffer: read it at once, do not keep it) */
  residual?: Float64Array
  /** multiple shooting: the segments' simulated outputs at this iteration, computed on request */
  segmentLines?: () => LiveSegmentLine[]
}

export interface OptimiseOptions {
  maxIterations?: number
  /** relative cost change */
  ftol?: number
  /** relative step size */
  xtol?: number
  /** scaled projected gradient */
  gtol?: number
  /** per parameter or for all: allow the log transform for wide positive bounds */
  logTransform?: boolean | boolean[]
  signal?: AbortSignal
  /** absolute deadline from Date.now() */
  deadline?: number
  onIteration?: (info: ProgressInfo) => void
}

export interface OptimiseResult {
  theta: Float64Array
  cost: number
  status: StopStatus
  /** for 'converged': which test passed */
  convergedBy: ConvergenceTest | null
  reason: string
  iterations: number
  /** residual evaluations (simulations) */
  evaluations: number
  costHistory: number[]
}

export class FitAborted extends Error {
  constructor(message = 'fit aborted') {
    super(message)
    this.name = 'FitAborted'
  }
}

/** The fit's time budget ran out inside a simulation. */
export class FitTimeout extends Error {
  constructor(message = 'time budget exhausted') {
    super(message)
    this.name = 'FitTimeout'
  }
}

export function sumSquares(r: Float64Array): number {
  let s = 0
  for (let i = 0; i < r.length; i++) s += r[i] * r[i]
  return s
}

/** Yield to the event loop so that an abort signal or a timer can fire (works in Node and browsers). */
export function yieldToEventLoop(): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, 0))
}
