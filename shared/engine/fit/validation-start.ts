/**
 * Initial states of a validation record, estimated with the parameters frozen at the fit's estimate.
 *
 * A fresh record rarely starts where the sheet's initial state says; fitting only x(t0) to the record
 * and keeping every parameter at its estimate judges the parameters, not the guess of the start (the
 * usual practice for validation runs: L. Ljung, System Identification: Theory for the User, 2nd ed.,
 * 1999, Sec. 16.6 on model validation with unknown initial conditions). The same bounded
 * Levenberg–Marquardt (lm.ts) runs on the initial states alone, with their forward sensitivities.
 *
 * Which states: those the fit estimates per experiment; when it estimates none, every state with
 * bounds in the sheet.
 */
import { toDeclared } from '../../sheet/compiled'
import type { FitResult } from '../../api/fit'
import type { FitProblem, PreparedExperiment } from './problem'
import type { LsqProblem } from './lsq'
import { levenbergMarquardt } from './lm'

export interface ValidationStart {
  /** state indices and their estimated initial values (internal units) */
  states: number[]
  values: Float64Array
  /** the initial state vector to simulate the record from */
  x0: Float64Array
  /** why the estimate could not be made (then x0 is the sheet's) */
  problem: string | null
}

export function validationStateIndices(prob: FitProblem): { index: number; lower: number; upper: number }[] {
  const seen = new Map<number, { index: number; lower: number; upper: number }>()
  for (const q of prob.quantities) if (q.kind === 'state' && !seen.has(q.index)) seen.set(q.index, { index: q.index, lower: q.lower, upper: q.upper })
  if (seen.size === 0) {
    prob.model.states.forEach((s, i) => {
      if (s.lower !== null && s.upper !== null && Number.isFinite(s.lower) && Number.isFinite(s.upper) && s.lower < s.upper) {
        seen.set(i, { index: i, lower: s.lower, upper: s.upper })
      }
    })
  }
  return [...seen.values()]
}

export async function estimateValidationStates(
  prob: FitProblem, ex: PreparedExperiment, p: Float64Array, baseX0: Float64Array,
  opts: { ftol: number; xtol: number; gtol: number; signal?: AbortSignal; deadline?: number },
): Promise<ValidationStart> {
  const states = validationStateIndices(prob)
  const x0 = Float64Array.from(baseX0)
  if (states.length === 0) {
    return { states: [], values: new Float64Array(0), x0, problem: 'the sheet gives no state bounds, so no initial state can be estimated' }
  }
  const ny = prob.model.ny
  const { tIdx, oIdx, y, sqrtW, count } = ex.obs
  const idx = states.map((s) => s.index)
  const sens = { params: [] as number[], initialStates: idx }
  const trial = Float64Array.from(baseX0)
  let lastError: string | null = null
  const lsq: LsqProblem = {
    n: states.length,
    m: count,
    lower: Float64Array.from(states, (s) => s.lower),
    upper: Float64Array.from(states, (s) => s.upper),
    names: states.map((s) => prob.model.states[s.index].name),
    evaluate(th, r, jac) {
      trial.set(baseX0)
      idx.forEach((k, c) => (trial[k] = th[c]))
      const res = prob.simulateExperiment(ex, p, trial, jac ? sens : false)
      if (!res) {
        lastError = prob.lastError
        return false
      }
      const ns = idx.length
      for (let i = 0; i < count; i++) r[i] = sqrtW[i] * (res.y[tIdx[i] * ny + oIdx[i]] - y[i])
      if (jac) {
        if (!res.dy) return false
        for (let c = 0; c < ns; c++) for (let i = 0; i < count; i++) jac[c * count + i] = sqrtW[i] * res.dy[(tIdx[i] * ny + oIdx[i]) * ns + c]
      }
      return true
    },
    failure: () => lastError,
  }
  const start = Float64Array.from(states, (s) => Math.min(s.upper, Math.max(s.lower, baseX0[s.index])))
  const res = await levenbergMarquardt(lsq, start, { ...opts, maxIterations: 100 })
  if (res.status === 'failed' || res.status === 'aborted') {
    return { states: idx, values: start, x0, problem: res.reason }
  }
  idx.forEach((k, c) => (x0[k] = res.theta[c]))
  return { states: idx, values: Float64Array.from(res.theta), x0, problem: null }
}

/**
 * The start of one record for a result: the estimated initial state vector, its values appended to
 * `rows` in declared units; or null, with a warning naming `record` in `warnings`, when they could not
 * be estimated (the caller simulates from the sheet's initial state then).
 */
export async function estimatedStartOf(
  prob: FitProblem, ex: PreparedExperiment, p: Float64Array, baseX0: Float64Array,
  opts: Parameters<typeof estimateValidationStates>[4], record: string, warnings: string[], rows: FitResult['validationInitialStates'],
): Promise<Float64Array | null> {
  const vs = await estimateValidationStates(prob, ex, p, baseX0, opts)
  if (vs.problem) {
    warnings.push(`${record}: initial states not estimated (${vs.problem}); the sheet's initial state is used`)
    return null
  }
  vs.states.forEach((i, c) => {
    const u = prob.model.states[i]
    rows.push({ experiment: ex.data.name, name: u.name, unit: u.unit, value: toDeclared(u, vs.values[c]) })
  })
  return vs.x0
}
