/**
 * Derivative-free fit for sheets that are not smooth: the simplex method of J. A. Nelder & R. Mead,
 * "A simplex method for function minimization", The Computer Journal 7 (1965) 308–313, as implemented
 * by the fmin package, run on the unconstrained coordinates w of transform.ts (θ = lo + (hi − lo)·sin² w,
 * Box 1966), so every trial point lies within the bounds.
 *
 * fmin's own test stops when the simplex's cost spread is below minErrorDelta (we pass ftol·C₀) and
 * its vertex spread below the same number: reported as 'converged' by the cost-change test. fmin runs
 * at most maxIterations simplex iterations and says nothing about why it returned, so we count its
 * iterations (through its `history` hook) and check its test on the last simplex: not met means
 * 'iteration-limit'. The evaluation limit (2·maxIterations), the time budget ('time-budget') and the
 * abort signal are thrown out of the cost function and caught here.
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
    const why = prob.failure?.() ?? 'a residual is not finite'
    return { theta, cost: NaN, status: 'failed', convergedBy: null, reason: `the model cannot be evaluated at the starting point: ${why}`, iterations: 0, evaluations, costHistory }
  }
  const ftol = opts.ftol ?? 1e-10
  const maxIterations = opts.maxIterations ?? 400 * n
  const minErrorDelta = Math.max(ftol * c0, 1e-300)
  // fmin pushes a copy of the simplex at the top of every iteration: count them, keep the last
  let simplexIterations = 0
  let last: { simplex: (number[] & { fx: number })[] } | null = null
  const history = { push(entry: { simplex: (number[] & { fx: number })[] }) { simplexIterations++; last = entry } }
  const result = (status: OptimiseResult['status'], reason: string, convergedBy: OptimiseResult['convergedBy'] = null): OptimiseResult => ({
    theta: best, cost: bestCost, status, convergedBy, reason, iterations: simplexIterations, evaluations, costHistory,
  })
  try {
    nelderMead(cost, w0, { maxIterations, minErrorDelta, nonZeroDelta: 1.1, history: history as unknown as unknown[] })
  } catch (e) {
    if (e instanceof FitAborted) return result('aborted', 'aborted by the caller')
    if (e instanceof BudgetExhausted || e instanceof FitTimeout) {
      return evaluations >= maxEval && !(e instanceof FitTimeout)
        ? result('iteration-limit', `evaluation limit (${maxEval}) reached before the simplex test passed`)
        : result('time-budget', 'time budget exhausted')
    }
    throw e
  }
  if (simplexIterations < maxIterations || (last !== null && simplexTestMet(last, minErrorDelta))) {
    return result('converged', 'simplex cost spread below ftol·C₀', 'cost-change')
  }
  return result('iteration-limit', `iteration limit (${maxIterations}) reached before the simplex test passed`)
}

/** fmin's own test on a simplex: cost spread and first-to-second vertex spread below minErrorDelta. */
function simplexTestMet(entry: { simplex: (number[] & { fx: number })[] }, minErrorDelta: number): boolean {
  const sorted = [...entry.simplex].sort((a, b) => a.fx - b.fx)
  const nv = sorted.length - 1
  let maxDiff = 0
  for (let i = 0; i < nv; i++) maxDiff = Math.max(maxDiff, Math.abs(sorted[0][i] - sorted[1][i]))
  return Math.abs(sorted[0].fx - sorted[nv].fx) < minErrorDelta && maxDiff < minErrorDelta
}
