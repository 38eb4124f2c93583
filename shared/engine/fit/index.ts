/**
 * Pewter's estimation engine: bounded prediction-error fits of a compiled sheet to measured traces.
 *
 *   const result = await runFit(model, spec, { method: 'lm', starts: 8, onProgress, signal, timeBudgetMs })
 *
 * To run starts on workers: `planStarts` in the caller, `fitFromStart` in each worker (it needs only the
 * sheet text compiled again, the spec and the plan, all structured-cloneable), `pickBest`, then
 * `runFit(model, spec, { ...options, runStarts })` with a runStarts that dispatches the plans.
 */
import type { CompiledModel } from '../../sheet/compiled'
import type { FitResult } from '../../api/fit'
import { simulate } from '../simulate'
import type { ProblemSpec, Simulate } from './problem'
import { runMultipleShootingFit } from './multiple-shooting/solve'
import {
  runFitWith, planStarts as planStartsWith, fitFromStart as fitFromStartWith,
  type FitOptions, type StartPlan, type StartOutcome,
} from './driver'

export type { FitOptions, StartPlan, StartOutcome } from './driver'
export { pickBest, resolveTolerances } from './driver'
export type { ProblemSpec, ExperimentData, EstimatedQuantity, Simulate } from './problem'
export { FitProblem } from './problem'
export { FitInputError } from './errors'
export { FitAborted } from './lsq'
export type { ProgressInfo, LsqProblem, OptimiseResult } from './lsq'
export { levenbergMarquardt, LM_DEFAULTS } from './lm'
export { nelderMeadFit } from './nelder-mead'
export { latinHypercube } from './lhs'
export { AT_BOUND_TOL, CAUTIONS } from './result'
export { suggestSegments, segmentStarts } from './multiple-shooting/segments'
export { MultipleShootingProblem } from './multiple-shooting/problem'
export { defectTolerance } from './multiple-shooting/solve'
export {
  SegmentServer, InThreadEvaluator, buildSegmentProblem, shapeOf,
  type SegmentSetup, type SegmentShape, type SegmentBatch, type SegmentRows, type SegmentEvaluator, type SegmentEvaluatorFactory,
} from './multiple-shooting/evaluator'

const engineSimulate: Simulate = simulate

/** A fit by single shooting, or by multiple shooting when `options.segments` is given. */
export function runFit(model: CompiledModel, spec: ProblemSpec, options: FitOptions = {}, sim: Simulate = engineSimulate): Promise<FitResult> {
  const segments = options.segments
  return segments ? runMultipleShootingFit(model, spec, { ...options, segments }, sim) : runFitWith(model, spec, options, sim)
}

export function planStarts(model: CompiledModel, spec: ProblemSpec, options: FitOptions = {}): StartPlan[] {
  return planStartsWith(model, spec, options, engineSimulate)
}

export function fitFromStart(model: CompiledModel, spec: ProblemSpec, plan: StartPlan, options: FitOptions = {}, deadline?: number): Promise<StartOutcome> {
  return fitFromStartWith(model, spec, plan, options, engineSimulate, deadline)
}

/** Alias of runFit for the server's background jobs. */
export const fit = runFit
