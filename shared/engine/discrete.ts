/**
 * Discrete-time sheets: x(k+1) = f(t_k, x(k), p, u(t_k)) at t_k = t0 + k·T (T the sample time),
 * with the sensitivity recursion s(k+1) = ∂f/∂x · s(k) + ∂f/∂θ (plus ∂f/∂u · ∂u/∂tau for a delay).
 * An output at time t uses the state of the last sample at or before t (zero-order hold), with the
 * inputs read at t.
 */
import type { CompiledModel } from '../sheet/compiled'
import type { SimulationResult } from './simulate-contract'
import { AbortedError, NonFiniteDerivativeError, SimulationRequestError, StepLimitError, TimeBudgetError } from './errors'
import type { InputSet } from './inputs'
import type { ModelSystem } from './system'
import { now, type SolverLimits } from './solvers/types'
import { writeOut, type Workspace } from './simulation-workspace'

export function simulateDiscrete(
  model: CompiledModel, sys: ModelSystem, inputs: InputSet, z0: Float64Array, t0: number,
  res: SimulationResult, limits: SolverLimits, ws: Workspace,
): void {
  const T = model.sampleTime
  if (T === null || !(T > 0)) throw new SimulationRequestError('a discrete sheet needs a sample time > 0')
  const nx = model.nx
  const n = sys.n
  const ns = sys.ns
  const np = model.np
  const nuu = sys.nuu
  const spt = model.secondsPerTimeUnit
  const p = sys.p
  const { u, du, J, Fp, Fu } = sys
  let z: Float64Array = ws.zScratch
  z.set(z0)
  let zn: Float64Array = new Float64Array(n)
  const tOut = res.t
  const nt = tOut.length
  let k = 0
  let iOut = 0
  for (;;) {
    const tk = t0 + k * T
    const tNext = t0 + (k + 1) * T
    // outputs whose last sample is k
    while (iOut < nt && tOut[iOut] < tNext - 1e-9 * T) {
      writeOut(model, ws, inputs, z, iOut, tOut[iOut], res)
      iOut++
    }
    if (iOut >= nt) break
    if (k >= limits.maxSteps) throw new StepLimitError(limits.maxSteps, tk)
    if (limits.signal !== null && limits.signal.aborted) throw new AbortedError(tk)
    if ((k & 255) === 0 && limits.deadline !== Infinity && now() > limits.deadline) throw new TimeBudgetError(limits.budgetMs, tk)
    inputs.evalAt(tk, u, du)
    model.rhs(tk, z, p, u, zn)
    for (let i = 0; i < nx; i++) {
      if (!Number.isFinite(zn[i])) throw new NonFiniteDerivativeError(model.states[i].name, tk, zn[i])
    }
    if (ns > 0) {
      model.dfdx(tk, z, p, u, J)
      model.dfdp(tk, z, p, u, Fp)
      if (nuu > 0) model.dfdu(tk, z, p, u, Fu)
      for (let j = 0; j < ns; j++) {
        const sj = sys.sens[j]
        const off = (j + 1) * nx
        for (let i = 0; i < nx; i++) {
          let acc = sj.param >= 0 ? Fp[i * np + sj.param] : 0
          for (let q = 0; q < nx; q++) acc += J[i * nx + q] * z[off + q]
          const slots = sj.delaySlots
          for (let q = 0; q < slots.length; q++) acc -= (Fu[i * nuu + slots[q]] * du[slots[q]]) / spt
          zn[off + i] = acc
        }
      }
    }
    const tmp = z
    z = zn
    zn = tmp
    k++
  }
  res.stats.method = 'discrete'
  res.stats.steps = k
  res.stats.rhsEvals = k
}
