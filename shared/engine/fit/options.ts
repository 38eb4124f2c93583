/**
 * What a fit is asked (FitOptions), the plan and outcome of one start, and the tolerances a fit uses.
 *
 * Default fit tolerances, tied to the integration tolerance rtol (default 1e-8): ftol = xtol = gtol =
 * clamp(10·rtol, 1e-14, 1e-4). Below about rtol the simulated cost itself is only known to about
 * rtol, so tighter tests would chase integration noise; when no step lowers the cost any more the
 * fit stops with "no further decrease possible".
 */
import type { CompiledModel } from '../../sheet/compiled'
import type { ConvergenceTest, FitMethod } from '../../api/fit'
import type { SolverName } from '../simulate-contract'
import { FitProblem, type ProblemSpec, type Simulate } from './problem'
import type { ProgressInfo, StopStatus } from './lsq'
import type { LandscapeRequest } from '../landscape'
import type { SegmentRequest } from './multiple-shooting/segments'
import type { SegmentEvaluatorFactory } from './multiple-shooting/lanes'

export interface FitOptions {
  method?: FitMethod
  /** Latin-hypercube starts in addition to the sheet's values (default 0) */
  starts?: number
  seed?: number
  rtol?: number
  atol?: number
  solver?: SolverName
  maxSteps?: number
  maxIterations?: number
  ftol?: number
  xtol?: number
  gtol?: number
  /** log coordinates for positive parameters whose bounds span more than two decades (default true) */
  logTransform?: boolean
  /** wall-clock budget for the whole estimation, ms */
  timeBudgetMs?: number
  signal?: AbortSignal
  onProgress?: (info: ProgressInfo) => void
  /** a multi-start fit's count of finished starts with an estimate (failed and aborted starts are not counted) */
  onStartFinished?: (withEstimate: number, planned: number) => void
  /** names of estimated quantities wanting a profile-likelihood interval */
  profile?: string[]
  landscape?: LandscapeRequest
  /** equation-error (one-step-ahead OLS) estimate: 'compare' adds the comparison row, 'start' also starts from it */
  equationError?: 'compare' | 'start'
  /** multiple shooting (multiple-shooting/): segments per experiment or a segment length; absent: single shooting */
  segments?: SegmentRequest
  /** multiple shooting: the host's helpers for the segments of each evaluation (multiple-shooting/evaluator.ts) */
  segmentEvaluator?: SegmentEvaluatorFactory
  /**
   * run the planned starts elsewhere (workers); must return one outcome per plan, in any order (after a
   * cancel: the outcomes of the starts that finished); `onProgress` receives every start's iterations,
   * `onStartFinished` the count of finished starts with an estimate
   */
  runStarts?: (plans: StartPlan[], onProgress?: (info: ProgressInfo) => void, onStartFinished?: (withEstimate: number, planned: number) => void) => Promise<StartOutcome[]>
}

export interface StartPlan {
  index: number
  /** 'sheet' | 'lhs' | 'equation-error' */
  origin: string
  theta: number[]
}

export interface StartOutcome {
  index: number
  start: number[]
  theta: number[]
  /** the weighted cost at theta */
  cost: number
  /** what starts are compared by: the cost, or for ml weighting Σ N_j ln(SSE_j/N_j) */
  objective: number
  status: StopStatus
  convergedBy: ConvergenceTest | null
  reason: string
  iterations: number
  simulations: number
  costHistory: number[]
  /** ml weighting: the final weight per output index */
  weights: number[] | null
}

export interface ResolvedTolerances {
  rtol: number
  atol: number
  ftol: number
  xtol: number
  gtol: number
}

export function resolveTolerances(opts: FitOptions): ResolvedTolerances {
  const rtol = opts.rtol ?? 1e-8
  const atol = opts.atol ?? rtol * 1e-2
  const tied = Math.min(1e-4, Math.max(1e-14, 10 * rtol))
  return { rtol, atol, ftol: opts.ftol ?? tied, xtol: opts.xtol ?? tied, gtol: opts.gtol ?? tied }
}

export function makeProblem(model: CompiledModel, spec: ProblemSpec, simulate: Simulate, opts: FitOptions, deadline?: number): FitProblem {
  const tol = resolveTolerances(opts)
  return new FitProblem(model, spec, simulate, { rtol: tol.rtol, atol: tol.atol, solver: opts.solver, signal: opts.signal, maxSteps: opts.maxSteps, deadline })
}
