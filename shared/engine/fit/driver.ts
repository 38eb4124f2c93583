/**
 * The fit driver: starting points, one optimisation per start, the best kept, the result assembled.
 * `planStarts`, `fitFromStart` and `pickBest` are separate so a caller can run starts on workers;
 * `runFitWith` does it all in this thread (or through the caller's `runStarts`).
 * The options, start and outcome shapes and the default tolerances are in options.ts.
 */
import type { CompiledModel } from '../../sheet/compiled'
import type { FitResult, FitWeighting } from '../../api/fit'
import { FitProblem, type ProblemSpec, type Simulate } from './problem'
import { makeProblem, resolveTolerances, type FitOptions, type StartOutcome, type StartPlan } from './options'
import { levenbergMarquardt } from './lm'
import { nelderMeadFit } from './nelder-mead'
import { latinHypercube } from './lhs'
import { FitAborted, FitTimeout, type OptimiseResult, type ProgressInfo } from './lsq'
import { buildResult } from './result'
import { equationErrorEstimate, type EquationErrorEstimate } from './equation-error'

export type { FitOptions, StartPlan, StartOutcome, ResolvedTolerances } from './options'
export { resolveTolerances, makeProblem } from './options'

/** The starting points: the sheet's values (or --set), then `starts` Latin-hypercube points. */
export function planStarts(
  model: CompiledModel, spec: ProblemSpec, opts: FitOptions, simulate: Simulate, eqErr?: EquationErrorEstimate | null,
  built?: FitProblem,
): StartPlan[] {
  const prob = built ?? makeProblem(model, spec, simulate, opts)
  const plans: StartPlan[] = [{ index: 0, origin: 'sheet', theta: Array.from(prob.start) }]
  if (eqErr && opts.equationError === 'start') {
    const th = Array.from(prob.start)
    eqErr.quantityIndex.forEach((q, k) => {
      th[q] = Math.min(prob.upper[q], Math.max(prob.lower[q], eqErr.theta[k]))
    })
    plans.push({ index: plans.length, origin: 'equation-error', theta: th })
  }
  const nLhs = Math.max(0, Math.floor(opts.starts ?? 0))
  if (nLhs > 0) {
    for (const pt of latinHypercube(prob.lower, prob.upper, nLhs, opts.seed ?? 1, opts.logTransform ?? true)) {
      plans.push({ index: plans.length, origin: 'lhs', theta: Array.from(pt) })
    }
  }
  return plans
}

async function optimiseOnce(prob: FitProblem, theta0: ArrayLike<number>, opts: FitOptions, deadline: number | undefined, start: number): Promise<OptimiseResult> {
  const tol = resolveTolerances(opts)
  const o = {
    maxIterations: opts.maxIterations, ftol: tol.ftol, xtol: tol.xtol, gtol: tol.gtol,
    logTransform: opts.logTransform ?? true, signal: opts.signal, deadline,
    onIteration: opts.onProgress ? (info: ProgressInfo) => opts.onProgress!({ ...info, start }) : undefined,
  }
  try {
    return opts.method === 'nelder-mead' ? nelderMeadFit(prob, theta0, o) : await levenbergMarquardt(prob, theta0, o)
  } catch (e) {
    if (e instanceof FitAborted) {
      return { theta: Float64Array.from(theta0), cost: NaN, status: 'aborted', convergedBy: null, reason: 'aborted by the caller', iterations: 0, evaluations: 0, costHistory: [] }
    }
    if (e instanceof FitTimeout) {
      return { theta: Float64Array.from(theta0), cost: NaN, status: 'time-budget', convergedBy: null, reason: 'time budget exhausted', iterations: 0, evaluations: 0, costHistory: [] }
    }
    throw e
  }
}

/** One optimisation from one start (ml weighting: alternating weighted fits and variance updates). */
export async function fitFromStart(
  model: CompiledModel, spec: ProblemSpec, plan: StartPlan, opts: FitOptions, simulate: Simulate, deadline?: number,
): Promise<StartOutcome> {
  const prob = makeProblem(model, spec, simulate, opts, deadline)
  const ny = model.ny
  let res = await optimiseOnce(prob, plan.theta, opts, deadline, plan.index)
  let iterations = res.iterations
  const history = [...res.costHistory]
  let weights: number[] | null = null
  let objective = res.cost
  if (prob.weighting === 'ml' && res.status !== 'failed' && res.status !== 'aborted') {
    for (let round = 0; round < 30; round++) {
      const u = prob.unweightedSsePerOutput(res.theta)
      if (!u) break
      const change = prob.updateMlWeights(u.sse, u.counts)
      if (change < 1e-8) break
      const next = await optimiseOnce(prob, res.theta, opts, deadline, plan.index)
      iterations += next.iterations
      history.push(...next.costHistory)
      res = next
      if (res.status !== 'converged' && res.status !== 'stalled') break
    }
    const u = prob.unweightedSsePerOutput(res.theta)
    weights = Array.from({ length: ny }, (_, j) => prob.experiments.find((e) => e.outputCount[j] > 0)?.weights[j] ?? 1)
    if (u) {
      objective = 0
      for (let j = 0; j < ny; j++) if (u.counts[j] > 0) objective += u.counts[j] * Math.log(u.sse[j] / u.counts[j])
    }
  }
  return {
    index: plan.index, start: plan.theta, theta: Array.from(res.theta), cost: res.cost, objective,
    status: res.status, convergedBy: res.convergedBy, reason: res.reason, iterations, simulations: prob.simulations, costHistory: history, weights,
  }
}

/** A start that ended with an estimate (neither failed nor aborted, finite objective). */
export const hasEstimate = (o: StartOutcome): boolean => o.status !== 'aborted' && o.status !== 'failed' && Number.isFinite(o.objective)

/** The best outcome: lowest objective among those that did not fail. */
export function pickBest(outcomes: StartOutcome[]): StartOutcome {
  if (outcomes.length === 0) throw new Error('no start was run, so there is no outcome to pick')
  let best: StartOutcome | null = null
  for (const o of outcomes) {
    if (o.status === 'failed' || !Number.isFinite(o.objective)) continue
    if (!best || o.objective < best.objective) best = o
  }
  return best ?? outcomes[0]
}

/** The whole fit in this thread (starts through `runStarts` when given). */
export async function runFitWith(
  model: CompiledModel, spec: ProblemSpec, opts: FitOptions, simulate: Simulate,
): Promise<FitResult> {
  const t0 = performance.now()
  const deadline = opts.timeBudgetMs !== undefined ? Date.now() + opts.timeBudgetMs : undefined
  const weighting: FitWeighting = spec.weighting ?? 'sheet'
  // validate everything up front (throws FitInputError)
  const probe = makeProblem(model, spec, simulate, opts)
  let eqErr: EquationErrorEstimate | null = null
  const eqWarnings: string[] = []
  if (opts.equationError) {
    try {
      eqErr = equationErrorEstimate(probe)
    } catch (e) {
      eqWarnings.push(`equation-error estimate not available: ${e instanceof Error ? e.message : String(e)}`)
    }
  }
  const plans = planStarts(model, spec, opts, simulate, eqErr, probe)
  let outcomes: StartOutcome[]
  if (opts.runStarts && plans.length > 1) {
    outcomes = await opts.runStarts(plans, opts.onProgress, opts.onStartFinished)
    outcomes.sort((a, b) => a.index - b.index)
  } else {
    outcomes = []
    let withEstimate = 0
    for (const plan of plans) {
      if (opts.signal?.aborted) break
      if (deadline !== undefined && Date.now() > deadline && outcomes.length > 0) break
      const o = await fitFromStart(model, spec, plan, opts, simulate, deadline)
      outcomes.push(o)
      if (hasEstimate(o)) opts.onStartFinished?.(++withEstimate, plans.length)
    }
  }
  const finished = outcomes.filter(hasEstimate)
  if (opts.signal?.aborted) {
    if (outcomes.length === 0) throw new FitAborted('stopped before any start had finished')
    // stopped by the caller between or during starts: the result is assembled without the raised signal
    // (and without the optional landscape and profiles, to end soon); the finished starts' best is still a
    // result; with none finished, the result says so by its status (aborted or failed)
    const calm: FitOptions = { ...opts, signal: undefined, landscape: undefined, profile: undefined, onProgress: undefined }
    if (finished.length === 0) {
      return buildResult({ model, spec, opts: calm, simulate, best: pickBest(outcomes), outcomes, weighting, eqErr, extraWarnings: eqWarnings, startedAt: t0, deadline })
    }
    const note = `stopped by request after ${finished.length} of ${plans.length} starts: the estimates are the best of the finished starts`
    const result = await buildResult({
      model, spec, opts: calm, simulate, best: pickBest(finished), outcomes, weighting, eqErr, extraWarnings: [...eqWarnings, note],
      startedAt: t0, deadline,
    })
    return { ...result, stoppedEarly: { finishedStarts: finished.length, plannedStarts: plans.length } }
  }
  const best = pickBest(outcomes)
  return buildResult({
    model, spec, opts, simulate, best, outcomes, weighting, eqErr, extraWarnings: eqWarnings,
    startedAt: t0, deadline,
  })
}
