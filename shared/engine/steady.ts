/**
 * Steady initial states: the states flagged `steady` are solved from f(x0, u(t0), p) = 0 (continuous
 * sheets) or x0 = f(x0, u(t0), p) (discrete sheets) by Newton's method with backtracking on the
 * residual norm (Dennis & Schnabel, Numerical Methods for Unconstrained Optimization and Nonlinear
 * Equations, 1983, Algorithm 6.3.5, simplified to step halving), the other states held at their
 * values. Their sensitivities follow from the implicit-function theorem:
 *   ∂x_S/∂θ = −(∂r_S/∂x_S)⁻¹ (∂r_S/∂θ + ∂r_S/∂x_F · ∂x_F/∂θ).
 */
import type { CompiledModel } from '../sheet/compiled'
import { SteadyStateError, fmt } from './errors'
import { luFactor, luSolve } from './solvers/lu'
import type { SensSpec } from './system'

const MAX_ITER = 60

export function steadyIndices(model: CompiledModel): number[] {
  const out: number[] = []
  model.states.forEach((s, i) => {
    if (s.steady) out.push(i)
  })
  return out
}

/**
 * Solves for the steady states in place in x. u holds the inputs at t0 (all slots). When sens is
 * given, s0 (nx·ns, block j at j·nx) must hold the sensitivities of the non-steady states; the
 * steady rows are filled in. du: input slopes at t0 (for delay parameters).
 */
export function solveSteady(
  model: CompiledModel, t0: number, x: Float64Array, p: Float64Array, u: Float64Array,
  idx: number[], sens: SensSpec[] | null, s0: Float64Array | null, du: Float64Array | null,
): number {
  const nx = model.nx
  const m = idx.length
  const names = idx.map((i) => model.states[i].name)
  const discrete = model.kind === 'discrete'
  const f = new Float64Array(nx)
  const J = new Float64Array(nx * nx)
  const A = new Float64Array(m * m)
  const piv = new Int32Array(m)
  const r = new Float64Array(m)
  const dx = new Float64Array(m)
  const xTry = new Float64Array(x.length)
  const resid = (xx: Float64Array, out: Float64Array): number => {
    model.rhs(t0, xx, p, u, f)
    let s = 0
    for (let a = 0; a < m; a++) {
      const i = idx[a]
      out[a] = discrete ? f[i] - xx[i] : f[i]
      s += out[a] * out[a]
    }
    return Math.sqrt(s)
  }
  const jacobian = (xx: Float64Array): boolean => {
    model.dfdx(t0, xx, p, u, J)
    for (let a = 0; a < m; a++) {
      for (let b = 0; b < m; b++) A[a * m + b] = J[idx[a] * nx + idx[b]] - (discrete && a === b ? 1 : 0)
    }
    return luFactor(A, m, piv)
  }
  let norm = resid(x, r)
  if (!Number.isFinite(norm)) throw new SteadyStateError(names, `the right-hand side is not finite at the starting values (t = ${fmt(t0)})`)
  let iter = 0
  let converged = norm === 0
  while (!converged) {
    if (iter++ >= MAX_ITER) throw new SteadyStateError(names, `Newton's method did not converge in ${MAX_ITER} iterations (residual ${fmt(norm)})`)
    if (!jacobian(x)) throw new SteadyStateError(names, `the Jacobian is singular at ${describe(model, idx, x)} (residual ${fmt(norm)}): no isolated steady state there`)
    for (let a = 0; a < m; a++) dx[a] = -r[a]
    luSolve(A, m, piv, dx)
    let lambda = 1
    let newNorm = Infinity
    for (let half = 0; half < 30; half++) {
      xTry.set(x)
      for (let a = 0; a < m; a++) xTry[idx[a]] += lambda * dx[a]
      newNorm = resid(xTry, r)
      if (Number.isFinite(newNorm) && newNorm < norm * (1 - 1e-4 * lambda)) break
      lambda *= 0.5
    }
    let small = true
    for (let a = 0; a < m; a++) {
      const i = idx[a]
      if (Math.abs(lambda * dx[a]) > 1e-12 * Math.max(Math.abs(x[i]), Math.abs(xTry[i]), 1e-300)) small = false
    }
    if (!(Number.isFinite(newNorm) && newNorm < norm)) {
      // no descent: accept only when the residual already is at rounding level
      if (small || norm <= 1e-14 * residScale(x, idx)) break
      throw new SteadyStateError(names, `Newton's method stalled at ${describe(model, idx, x)} with residual ${fmt(norm)}: the equations may have no steady state near the given values`)
    }
    x.set(xTry)
    resid(x, r)
    norm = newNorm
    converged = norm === 0 || small
  }
  if (sens !== null && s0 !== null) {
    if (!jacobian(x)) throw new SteadyStateError(names, 'the Jacobian is singular at the steady state: sensitivities undefined')
    const ns = sens.length
    const np = model.np
    const nuu = model.nu + model.nd
    const Fp = new Float64Array(Math.max(1, nx * np))
    const Fu = new Float64Array(Math.max(1, nx * nuu))
    model.dfdp(t0, x, p, u, Fp)
    if (nuu > 0) model.dfdu(t0, x, p, u, Fu)
    const isSteady = new Uint8Array(nx)
    for (const i of idx) isSteady[i] = 1
    const rhs = new Float64Array(m)
    for (let j = 0; j < ns; j++) {
      const sj = sens[j]
      const off = j * nx
      for (let a = 0; a < m; a++) {
        const i = idx[a]
        let acc = sj.param >= 0 ? Fp[i * np + sj.param] : 0
        for (const slot of sj.delaySlots) acc -= (Fu[i * nuu + slot] * (du ? du[slot] : 0)) / model.secondsPerTimeUnit
        for (let k = 0; k < nx; k++) if (!isSteady[k]) acc += J[i * nx + k] * s0[off + k]
        rhs[a] = -acc
      }
      luSolve(A, m, piv, rhs)
      for (let a = 0; a < m; a++) s0[off + idx[a]] = rhs[a]
    }
  }
  return iter
}

function residScale(x: Float64Array, idx: number[]): number {
  let s = 0
  for (const i of idx) s = Math.max(s, Math.abs(x[i]))
  return Math.max(s, 1)
}

function describe(model: CompiledModel, idx: number[], x: Float64Array): string {
  return idx.map((i) => `${model.states[i].name} = ${fmt(x[i])}`).join(', ')
}
