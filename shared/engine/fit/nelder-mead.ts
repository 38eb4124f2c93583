/**
 * Derivative-free fit for sheets that are not smooth: the simplex method of J. A. Nelder & R. Mead,
 * "A simplex method for function minimization", The Computer Journal 7 (1965) 308–313 (simplex.ts),
 * run on the unconstrained coordinates w of transform.ts (θ = lo + (hi − lo)·sin² w, Box 1966), so
 * every trial point lies within the bounds.
 *
 * The simplex stops when its cost spread is below ftol·C₀ and its two best vertices are closer than the
 * same number: reported as 'converged' by the cost-change test; otherwise at most maxIterations simplex
 * iterations ('iteration-limit'). The evaluation limit (2·maxIterations), the time budget
 * ('time-budget') and the abort signal are thrown out of the cost function and caught here.
 */
import { simplexMinimise } from './simplex'
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
  const cost = (w: Float64Array): number => {
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
    const why = prob.failure?.() ?? 'a residual is not finite'
    return { theta, cost: NaN, status: 'failed', convergedBy: null, reason: `the model cannot be evaluated at the starting point: ${why}`, iterations: 0, evaluations, costHistory }
  }
  const ftol = opts.ftol ?? 1e-10
  const maxIterations = opts.maxIterations ?? 400 * n
  const minErrorDelta = Math.max(ftol * c0, 1e-300)
  let iterations = 0
  const result = (status: OptimiseResult['status'], reason: string, convergedBy: OptimiseResult['convergedBy'] = null): OptimiseResult => ({
    theta: best, cost: bestCost, status, convergedBy, reason, iterations, evaluations, costHistory,
  })
  let converged: boolean
  try {
    const run = simplexMinimise(cost, w0, { maxIterations, tolerance: minErrorDelta, nonZeroDelta: 1.1, onIteration: (k) => { iterations = k } })
    iterations = run.iterations
    converged = run.converged
  } catch (e) {
    if (e instanceof FitAborted) return result('aborted', 'aborted by the caller')
    if (e instanceof BudgetExhausted || e instanceof FitTimeout) {
      return evaluations >= maxEval && !(e instanceof FitTimeout)
        ? result('iteration-limit', `evaluation limit (${maxEval}) reached before the simplex test passed`)
        : result('time-budget', 'time budget exhausted')
    }
    throw e
  }
  if (converged) return result('converged', 'simplex cost spread below ftol·C₀', 'cost-change')
  return result('iteration-limit', `iteration limit (${maxIterations}) reached before the simplex test passed`)
}
