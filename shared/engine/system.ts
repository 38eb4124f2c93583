/**
 * A compiled sheet as an ODE system for the solvers, with its forward sensitivities appended:
 *   z = [x, s_1, …, s_ns],   s_j = ∂x/∂θ_j,
 *   s_j' = ∂f/∂x · s_j + ∂f/∂θ_j        (θ_j a parameter; for an initial state the last term is 0)
 * (the variational equations, Hairer, Nørsett & Wanner, Solving ODEs I, Sec. I.14, Theorem 14.1;
 * "forward sensitivity analysis", e.g. Hindmarsh & Serban, CVODES guide, Sec. 2.6).
 * A delay parameter tau also acts through its delayed input slots:
 *   ∂f/∂tau += ∂f/∂u_slot · (−u'(t − tau/s) / s),   s = secondsPerTimeUnit.
 * No allocation per call: all work arrays are owned here and reused.
 */
import type { CompiledModel } from '../sheet/compiled'
import type { InputSet } from './inputs'
import type { OdeSystem } from './solvers/types'

export interface SensSpec {
  /** parameter index, or −1 */
  param: number
  /** state index (initial value), or −1 */
  state: number
  /** input slots whose delay is this parameter */
  delaySlots: number[]
}

export class ModelSystem implements OdeSystem {
  readonly n: number
  readonly nBlock: number
  readonly ns: number
  readonly nuu: number
  readonly model: CompiledModel
  inputs!: InputSet
  p: Float64Array
  readonly sens: SensSpec[]
  readonly u: Float64Array
  readonly du: Float64Array
  readonly J: Float64Array
  readonly Fp: Float64Array
  readonly Fu: Float64Array
  private readonly needFp: boolean
  private readonly needFu: boolean
  /** packed arguments of model.d2f: [x, s, v, vt], [p, q], [u, r, ν] */
  private readonly X: Float64Array
  private readonly P: Float64Array
  private readonly U: Float64Array
  private readonly d2: Float64Array

  constructor(model: CompiledModel, sens: SensSpec[]) {
    this.model = model
    this.nBlock = model.nx
    this.ns = sens.length
    this.n = model.nx * (1 + sens.length)
    this.nuu = model.nu + model.nd
    this.sens = sens
    this.p = new Float64Array(model.np)
    this.u = new Float64Array(Math.max(1, this.nuu))
    this.du = new Float64Array(Math.max(1, this.nuu))
    this.J = new Float64Array(model.nx * model.nx)
    this.Fp = new Float64Array(Math.max(1, model.nx * model.np))
    this.Fu = new Float64Array(Math.max(1, model.nx * this.nuu))
    this.needFp = sens.some((s) => s.param >= 0)
    this.needFu = sens.some((s) => s.delaySlots.length > 0)
    this.X = new Float64Array(3 * model.nx + 1)
    this.P = new Float64Array(2 * model.np)
    this.U = new Float64Array(3 * this.nuu)
    this.d2 = new Float64Array(model.nx)
  }

  f(t: number, z: Float64Array, dz: Float64Array): void {
    const { model, p, u } = this
    this.inputs.eval(t, u)
    model.rhs(t, z, p, u, dz)
    if (this.ns === 0) return
    const nx = this.nBlock
    const J = this.J
    model.dfdx(t, z, p, u, J)
    if (this.needFp) model.dfdp(t, z, p, u, this.Fp)
    if (this.needFu) {
      model.dfdu(t, z, p, u, this.Fu)
      this.inputs.slope(this.du)
    }
    const np = model.np
    const spt = model.secondsPerTimeUnit
    for (let j = 0; j < this.ns; j++) {
      const sj = this.sens[j]
      const off = (j + 1) * nx
      for (let i = 0; i < nx; i++) {
        let acc = 0
        const r = i * nx
        for (let k = 0; k < nx; k++) acc += J[r + k] * z[off + k]
        if (sj.param >= 0) acc += this.Fp[i * np + sj.param]
        for (let q = 0; q < sj.delaySlots.length; q++) {
          const slot = sj.delaySlots[q]
          acc -= (this.Fu[i * this.nuu + slot] * this.du[slot]) / spt
        }
        dz[off + i] = acc
      }
    }
  }

  jac(t: number, z: Float64Array, J: Float64Array, ft: Float64Array): void {
    const { model, p, u } = this
    this.inputs.eval(t, u)
    model.dfdx(t, z, p, u, J)
    model.dfdt(t, z, p, u, ft)
    const nx = this.nBlock
    if (this.nuu > 0) {
      model.dfdu(t, z, p, u, this.Fu)
      this.inputs.slope(this.du)
      for (let i = 0; i < nx; i++) {
        let acc = 0
        for (let k = 0; k < this.nuu; k++) acc += this.Fu[i * this.nuu + k] * this.du[k]
        ft[i] += acc
      }
    }
  }

  /**
   * M_j·v + (∂/∂t of block j)·vt for each sensitivity j, exactly, from the sheet's generated
   * second directional derivative d2f (coupling-codegen.ts): w = (s_j, e_θj, r_j) with
   * r_j = −u'/s on a delay parameter's slots (the ∂f/∂tau term of f above), and the second
   * direction (v, vt, vt·u') in (x, t, u): the inputs move with t at their interval's slope.
   */
  couple(t: number, z: Float64Array, v: Float64Array, vt: number, out: Float64Array): void {
    const ns = this.ns
    if (ns === 0) return
    const { model, X, P, U, d2, nuu } = this
    const nx = this.nBlock
    const np = model.np
    this.inputs.eval(t, this.u)
    if (nuu > 0) this.inputs.slope(this.du)
    for (let i = 0; i < nx; i++) {
      X[i] = z[i]
      X[2 * nx + i] = v[i]
    }
    X[3 * nx] = vt
    for (let k = 0; k < np; k++) P[k] = this.p[k]
    for (let k = 0; k < nuu; k++) {
      U[k] = this.u[k]
      U[nuu + k] = 0
      U[2 * nuu + k] = vt * this.du[k]
    }
    const spt = model.secondsPerTimeUnit
    for (let j = 0; j < ns; j++) {
      const sj = this.sens[j]
      const off = (j + 1) * nx
      for (let i = 0; i < nx; i++) X[nx + i] = z[off + i]
      if (sj.param >= 0) P[np + sj.param] = 1
      for (let q = 0; q < sj.delaySlots.length; q++) U[nuu + sj.delaySlots[q]] = -this.du[sj.delaySlots[q]] / spt
      model.d2f(t, X, P, U, d2)
      if (sj.param >= 0) P[np + sj.param] = 0
      for (let q = 0; q < sj.delaySlots.length; q++) U[nuu + sj.delaySlots[q]] = 0
      for (let i = 0; i < nx; i++) out[off + i] += d2[i]
    }
  }
}
