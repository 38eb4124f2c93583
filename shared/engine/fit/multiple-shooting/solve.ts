/**
 * Multiple-shooting fit: the augmented-Lagrangian method on the segmented problem (problem.ts), then a
 * single-shooting polish so that the reported estimate and statistics are those of the ordinary
 * output-error problem.
 *
 * Method (J. Nocedal & S. J. Wright, Numerical Optimization, 2nd ed., Springer 2006, Algorithm 17.4,
 * with the least-squares form of L_A): for k = 0, 1, …
 *   1. minimise ‖r(w)‖² + ‖√μ_k·ĥ(w) + λ_k/(2√μ_k)‖² over the box with the bounded Levenberg–Marquardt
 *      method (../lm.ts), warm-started at the previous w;
 *   2. if max|ĥ| ≤ the defect tolerance: stop (feasible);
 *   3. λ_{k+1} = λ_k + 2μ_k·ĥ (the first-order multiplier update for this scaling);
 *      μ_{k+1} = 10·μ_k unless max|ĥ| fell below a quarter of its previous value.
 * The first penalty weight balances the penalty against the output cost at the start:
 * μ_0 = 100·max(C_out, m_out) / max(‖ĥ_0‖², 10⁻²·n_defects) (tuned on the test cases: smaller weights need more rounds). Segment states start from the measured
 * outputs where an output is a state (problem.ts initialNodes).
 *
 * Why it reaches the optimum where single shooting does not: with the states at the segment nodes
 * free, a poor θ cannot make the simulated trajectory drift far from the data (each segment restarts
 * near the measurements), so the early iterations see a nearly quadratic cost in θ; continuity is
 * enforced gradually (H. G. Bock, "Recent advances in parameter identification techniques for O.D.E.",
 * in P. Deuflhard & E. Hairer (eds.), Numerical Treatment of Inverse Problems in Differential and
 * Integral Equations, Birkhäuser (1983) 95–121). Here continuity enters by the augmented Lagrangian rather
 * than Bock's condensed constrained Gauss–Newton step; at a feasible stationary point both give the
 * same estimate, and the single-shooting polish removes any remaining defect.
 */
import type { CompiledModel } from '../../../sheet/compiled'
import type { FitResult, MultipleShootingInfo } from '../../../api/fit'
import { levenbergMarquardt } from '../lm'
import { FitAborted, FitTimeout, sumSquares, type ProgressInfo, type StopStatus } from '../lsq'
import { FitInputError } from '../errors'
import type { ProblemSpec, Simulate } from '../problem'
import { fitFromStart, makeProblem, pickBest, planStarts, resolveTolerances, type FitOptions, type StartOutcome, type StartPlan } from '../driver'
import { buildResult } from '../result'
import { MultipleShootingProblem } from './problem'
import type { SegmentRequest } from './segments'
import { shapeOf } from './evaluator'
import { segmentLinesAt } from './live-lines'

/** Penalty rounds at most. */
export const MAX_PENALTY_ROUNDS = 12

/** The largest scaled continuity defect called continuous: clamp(100·rtol, 1e-8, 1e-3). */
export function defectTolerance(rtol: number): number {
  return Math.min(1e-3, Math.max(1e-8, 100 * rtol))
}

export interface ShootingOutcome {
  theta: number[]
  /** output part of the cost at the end (segments' own trajectories) */
  cost: number
  defect: number
  feasible: boolean
  rounds: number
  iterations: number
  simulations: number
  status: StopStatus
  reason: string
  costHistory: number[]
}

/** The augmented-Lagrangian multiple-shooting solve from one start (θ only; nodes from the data). */
export async function shootFromStart(
  ms: MultipleShootingProblem, theta0: ArrayLike<number>, opts: FitOptions, deadline: number | undefined, start: number,
): Promise<ShootingOutcome> {
  const tol = resolveTolerances(opts)
  const dTol = defectTolerance(tol.rtol)
  const sims0 = ms.simulations
  let w: Float64Array
  try {
    w = ms.initialNodes(theta0)
  } catch (e) {
    if (e instanceof FitAborted) return bad('aborted', 'aborted by the caller')
    if (e instanceof FitTimeout) return bad('time-budget', 'time budget exhausted')
    throw e
  }
  const r = new Float64Array(ms.m)
  ms.mu = 1
  ms.lambda.fill(0)
  if (!(await safeEval(w, r))) return bad('failed', `the model cannot be evaluated at the starting point${ms.base.lastError ? `: ${ms.base.lastError}` : ''}`)
  const c0 = ms.outputCost(r)
  let h2 = 0
  for (const d of ms.defects) h2 += d * d
  ms.mu = (100 * Math.max(c0, ms.mOut)) / Math.max(h2, 1e-2 * Math.max(1, ms.nDefects))
  const history: number[] = [c0]
  let iterations = 0
  let prevDefect = ms.maxDefect()
  let status: StopStatus = 'stalled'
  let reason = ''
  let rounds = 0
  let cost = c0
  let defect = prevDefect
  for (; rounds < MAX_PENALTY_ROUNDS; ) {
    rounds++
    const res = await levenbergMarquardt(ms, w, {
      maxIterations: opts.maxIterations, ftol: tol.ftol, xtol: tol.xtol, gtol: tol.gtol,
      logTransform: opts.logTransform ?? true, signal: opts.signal, deadline,
      onIteration: opts.onProgress ? (info: ProgressInfo) => {
        const r = info.residual
        opts.onProgress!({ ...info, parameters: info.parameters.slice(0, ms.nTheta), start, ...(r ? { segmentLines: () => segmentLinesAt(ms, r) } : {}) })
      } : undefined,
    })
    iterations += res.iterations
    if (res.status === 'aborted' || res.status === 'failed') {
      status = res.status
      reason = res.reason
      break
    }
    w = Float64Array.from(res.theta)
    if (!(await safeEval(w, r))) {
      status = 'failed'
      reason = 'the segments cannot be evaluated at the last estimate'
      break
    }
    cost = ms.outputCost(r)
    defect = ms.maxDefect()
    history.push(cost)
    if (res.status === 'iteration-limit' || res.status === 'time-budget') {
      status = res.status
      reason = res.reason
      break
    }
    if (defect <= dTol) {
      status = 'converged'
      reason = `segments continuous: largest scaled defect ${defect.toExponential(2)} ≤ ${dTol.toExponential(0)} after ${rounds} penalty round${rounds > 1 ? 's' : ''}`
      break
    }
    for (let d = 0; d < ms.nDefects; d++) ms.lambda[d] += 2 * ms.mu * ms.defects[d]
    if (defect > 0.25 * prevDefect) ms.mu *= 10
    prevDefect = defect
  }
  if (status === 'stalled' && !reason) {
    reason = `continuity not reached: largest scaled defect ${defect.toExponential(2)} > ${dTol.toExponential(0)} after ${rounds} penalty rounds`
  }
  return {
    theta: Array.from(w.subarray(0, ms.nTheta)), cost, defect, feasible: status === 'converged', rounds, iterations,
    simulations: ms.simulations - sims0, status, reason, costHistory: history,
  }

  async function safeEval(x: Float64Array, rr: Float64Array): Promise<boolean> {
    try {
      return (await ms.evaluateAsync(x, rr, null)) && rr.every(Number.isFinite)
    } catch (e) {
      if (e instanceof FitAborted || e instanceof FitTimeout) return false
      throw e
    }
  }

  function bad(s: StopStatus, why: string): ShootingOutcome {
    return {
      theta: Array.from(theta0), cost: NaN, defect: NaN, feasible: false, rounds: 0, iterations: 0,
      simulations: ms.simulations - sims0, status: s, reason: why, costHistory: [],
    }
  }
}

/**
 * The whole multiple-shooting fit: every planned start is shot, then polished by single shooting;
 * the best polished outcome is the result, with a `multipleShooting` section.
 */
export async function runMultipleShootingFit(
  model: CompiledModel, spec: ProblemSpec, opts: FitOptions & { segments: SegmentRequest }, simulate: Simulate,
): Promise<FitResult> {
  const t0 = performance.now()
  if (model.kind !== 'continuous') {
    throw new FitInputError('multiple shooting is for continuous-time sheets; a discrete-time sheet restarts every sample already', { kind: 'argument' })
  }
  if (model.nm > 0) {
    // a segment starts from free states but would start in the sheet's initial modes, not the ones the run is in there
    throw new FitInputError(`multiple shooting cannot carry the sheet's modes (${model.modes.map((m) => m.name).join(', ')}) to the segment starts: fit this sheet by single shooting (leave out the segments)`, { kind: 'argument' })
  }
  const deadline = opts.timeBudgetMs !== undefined ? Date.now() + opts.timeBudgetMs : undefined
  const tol = resolveTolerances(opts)
  const probe = makeProblem(model, spec, simulate, opts)
  const plans: StartPlan[] = planStarts(model, spec, opts, simulate, null, probe)
  const base = makeProblem(model, spec, simulate, opts, deadline)
  const ms = new MultipleShootingProblem(base, opts.segments, spec.bounds)
  const outcomes: StartOutcome[] = []
  const shots: ShootingOutcome[] = []
  // helpers for the segments of each evaluation (evaluator.ts), when the host offers them
  ms.evaluator = ms.segmentCount > 1 ? opts.segmentEvaluator?.({ segments: ms.segmentCount, shape: shapeOf(ms), deadline }) ?? null : null
  try {
    for (const plan of plans) {
      if (opts.signal?.aborted) break
      if (deadline !== undefined && Date.now() > deadline && outcomes.length > 0) break
      const shot = await shootFromStart(ms, plan.theta, opts, deadline, plan.index)
      shots.push(shot)
      outcomes.push(await polish(plan, shot))
    }
  } finally {
    const ev = ms.evaluator
    ms.evaluator = null
    await ev?.close()
  }

  async function polish(plan: StartPlan, shot: ShootingOutcome): Promise<StartOutcome> {
    const polished = await fitFromStart(model, spec, { ...plan, theta: shot.theta }, opts, simulate, deadline)
    const status: StopStatus = shot.status === 'aborted' || polished.status === 'aborted' ? 'aborted'
      : polished.status === 'failed' ? 'failed'
        : !shot.feasible && polished.status === 'converged' ? 'stalled' : polished.status
    const reason = shot.feasible || shot.status === 'aborted'
      ? `${polished.reason} (single-shooting polish after multiple shooting: ${shot.reason})`
      : `multiple shooting did not reach continuity (${shot.reason}); single-shooting polish: ${polished.reason}`
    return {
      ...polished, start: plan.theta, status, convergedBy: status === 'converged' ? polished.convergedBy : null, reason,
      iterations: shot.iterations + polished.iterations, simulations: shot.simulations + polished.simulations,
      costHistory: [...shot.costHistory, ...polished.costHistory],
    }
  }
  const best = pickBest(outcomes)
  const bestShot = shots[outcomes.indexOf(best)] ?? shots[0]
  const result = await buildResult({
    model, spec, opts, simulate, best, outcomes, weighting: spec.weighting ?? 'sheet', eqErr: null, extraWarnings: [],
    startedAt: t0, deadline,
  })
  // the single-shooting cost at the multiple-shooting estimate: far above the segments' cost means the
  // record cannot be simulated in one piece (drift, unstable modes), and the polish had a hard start
  let ssAtShot: number | null = null
  if (bestShot && bestShot.theta.every(Number.isFinite)) {
    const r = new Float64Array(base.m)
    try {
      if (base.evaluate(Float64Array.from(bestShot.theta), r, null)) ssAtShot = sumSquares(r)
    } catch { ssAtShot = null }
  }
  const info: MultipleShootingInfo = {
    segments: ms.segmentCount,
    experiments: base.experiments.map((ex, e) => ({
      experiment: e, name: ex.data.name, boundaries: Array.from(ms.starts[e], (k) => ex.tOut[k]).slice(1),
    })),
    secondsPerTimeUnit: model.secondsPerTimeUnit,
    defect: bestShot && Number.isFinite(bestShot.defect) ? bestShot.defect : null,
    defectTolerance: defectTolerance(tol.rtol),
    continuous: bestShot?.feasible ?? false,
    penaltyRounds: bestShot?.rounds ?? 0,
    iterations: bestShot?.iterations ?? 0,
    simulations: shots.reduce((a, s) => a + s.simulations, 0),
    segmentCost: bestShot && Number.isFinite(bestShot.cost) ? bestShot.cost : null,
    singleShootingCostAtEstimate: ssAtShot !== null && Number.isFinite(ssAtShot) ? ssAtShot : null,
    reason: bestShot?.reason ?? 'no start was shot',
  }
  if (bestShot && !bestShot.feasible) {
    result.warnings.unshift(`multiple shooting: ${bestShot.reason}; the estimate is the single-shooting polish from where it stopped`)
  }
  if (info.segmentCost !== null && info.singleShootingCostAtEstimate !== null && info.singleShootingCostAtEstimate > 1.01 * info.segmentCost + 1e-12) {
    result.warnings.push(`multiple shooting: simulated in one piece the estimate costs ${info.singleShootingCostAtEstimate.toPrecision(4)} against ${info.segmentCost.toPrecision(4)} over the segments; the record is hard to simulate over its whole length (drift or an unstable mode), so judge the single-shooting statistics with care`)
  }
  result.multipleShooting = info
  result.elapsedMs = performance.now() - t0
  return result
}
