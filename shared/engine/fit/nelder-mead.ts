/**
 * Derivative-free fit for sheets that are not smooth: the simplex method of J. A. Nelder & R. Mead,
 * "A simplex method for function minimization", The Computer Journal 7 (1965) 308–313, as implemented
 * by the fmin package, run on the unconstrained coordinates w of transform.ts (θ = lo + (hi − lo)·sin² w,
 * Box 1966), so every trial point lies within the bounds.
 *
 * fmin's own test stops when the simplex's cost spread is below minErrorDelta (we pass ftol·C₀) and
 * its vertex spread below the same number; we also stop on the iteration limit, the time budget
 * and the abort signal (thrown out of the cost function and caught here).
 */
import { nelderMead } from 'fmin/index.js'
import { BoxTransform } from './transform'
import { FitAborted, FitTimeout, sumSquares, type LsqProblem, type OptimiseOptions, type OptimiseResult } from './lsq'

class BudgetExhausted extends Error {}

export function nelderMeadFit(prob: LsqProblem, theta0: ArrayLike<number>, opts: OptimiseOptions = {}): OptimiseResult {
  const { n, m } = prob
  const tr = new BoxTransform(prob.lower, prob.upper, opts.logTransform ?? true)
  const theta = new Float64Array(n)
  const r = new Float64Array(m)
  const best = new Float64Array(n)
  let bestCost = Infinity
  let evaluations = 0
  const costHistory: number[] = []
  const maxEval = (opts.maxIterations ?? 400 * n) * 2
  const cost = (w: number[]): number => {
    if (opts.signal?.aborted) throw new FitAborted()
    if (opts.deadline !== undefined && Date.now() > opts.deadline) throw new BudgetExhausted()
    if (evaluations >= maxEval) throw new BudgetExhausted()
    tr.fromW(w, theta)
    evaluations++
    const ok = prob.evaluate(theta, r, null)
    const c = ok ? sumSquares(r) : Infinity
    const val = Number.isFinite(c) ? c : Number.MAX_VALUE
    if (val < bestCost) {
      bestCost = val
      best.set(theta)
      costHistory.push(val)
      opts.onIteration?.({ iteration: costHistory.length - 1, cost: val, parameters: Array.from(theta) })
    }
    return val
  }
  const w0 = new Array<number>(n)
  for (let j = 0; j < n; j++) theta[j] = Math.min(prob.upper[j], Math.max(prob.lower[j], theta0[j]))
  tr.toW(theta, w0)
  // cost at the start for the tolerance scale
  tr.fromW(w0, theta)
  const c0 = prob.evaluate(theta, r, null) ? sumSquares(r) : Infinity
  evaluations++
  if (!Number.isFinite(c0)) {
    return { theta, cost: NaN, status: 'failed', reason: 'the model cannot be evaluated at the starting point', iterations: 0, evaluations, costHistory }
  }
  const ftol = opts.ftol ?? 1e-10
  try {
    nelderMead(cost, w0, { maxIterations: opts.maxIterations ?? 400 * n, minErrorDelta: Math.max(ftol * c0, 1e-300), nonZeroDelta: 1.1 })
  } catch (e) {
    if (e instanceof FitAborted) {
      return { theta: best, cost: bestCost, status: 'aborted', reason: 'aborted by the caller', iterations: costHistory.length, evaluations, costHistory }
    }
    if (e instanceof BudgetExhausted || e instanceof FitTimeout) {
      const why = evaluations >= maxEval && !(e instanceof FitTimeout) ? 'evaluation limit reached' : 'time budget exhausted'
      return { theta: best, cost: bestCost, status: 'stopped', reason: why, iterations: costHistory.length, evaluations, costHistory }
    }
    throw e
  }
  return {
    theta: best, cost: bestCost, status: 'converged', reason: 'simplex cost spread below ftol·C₀',
    iterations: costHistory.length, evaluations, costHistory,
  }
}
