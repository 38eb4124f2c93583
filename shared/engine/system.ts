/**
 * A compiled sheet as an ODE system for the solvers, with its forward sensitivities appended:
 *   z = [x, s_1, …, s_ns],   s_j = ∂x/∂θ_j,
 *   s_j' = ∂f/∂x · s_j + ∂f/∂θ_j        (θ_j a parameter; for an initial state the last term is 0)
 * (the variational equations, Hairer, Nørsett & Wanner, Solving ODEs I, Sec. I.14, Theorem 14.1;
 * "forward sensitivity analysis", e.g. Hindmarsh & Serban, CVODES guide, Sec. 2.6).
 * A delay parameter tau also acts through its delayed input slots:
 *   ∂f/∂tau += ∂f/∂u_slot · (−u'(t − tau/s) / s),   s = secondsPerTimeUnit.
 * The sensitivities' part of f is the sheet's generated dfs when it has one (all sensitivities in
 * one call, no Jacobians formed), else ∂f/∂x, ∂f/∂p (and ∂f/∂u) and the products above.
 * No allocation per call: all work arrays are owned here and reused.
 */
import type { CompiledModel, CouplingAllFn, SensitivityRhsFn } from '../sheet/compiled'
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
  /** per sensitivity: its parameter index (−1: none) and whether it moves delayed input slots */
  private readonly paramOf: Int32Array
  private readonly delayed: Uint8Array
  /**
   * per sensitivity j, the packed arguments of model.d2f at the point fixed by `coupleAt`:
   * X_j = [x, s_j, v, vt], P_j = [p, q_j], U_j = [u, r_j, ν]; `couple` writes only v, vt and ν
   */
  private readonly Xj: Float64Array[]
  private readonly Pj: Float64Array[]
  private readonly Uj: Float64Array[]
  /**
   * with the generated d2fs (all sensitivities in one call), its arguments instead: the augmented
   * state at the point, P = [p, q_1, …], U = [u, ν, r_1, …]
   */
  private readonly d2fs: CouplingAllFn | null
  private readonly zAt: Float64Array
  private readonly Pall: Float64Array
  private readonly Uall: Float64Array
  /** with the generated dfs (the sensitivities' right-hand sides in one call), its inputs [u, –, r_1, …] */
  private readonly dfs: SensitivityRhsFn | null
  private readonly Uf: Float64Array
  /** t and the input slopes at that point */
  private tAt = 0
  private readonly duAt: Float64Array
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
    this.paramOf = Int32Array.from(sens, (s) => s.param)
    this.delayed = Uint8Array.from(sens, (s) => (s.delaySlots.length > 0 ? 1 : 0))
    this.d2fs = model.d2fs ?? null
    this.dfs = model.dfs ?? null
    const perSens = this.d2fs === null ? sens : []
    this.Xj = perSens.map(() => new Float64Array(3 * model.nx + 1))
    this.Pj = perSens.map(() => new Float64Array(2 * model.np))
    this.Uj = perSens.map(() => new Float64Array(3 * this.nuu))
    const all = this.d2fs === null ? 0 : 1
    this.zAt = new Float64Array(all * this.n)
    this.Uall = new Float64Array(all * this.nuu * (2 + sens.length))
    this.Uf = new Float64Array(this.dfs === null ? 0 : this.nuu * (2 + sens.length))
    // P = [p, q_1, …]: the unit directions q_j are fixed; p is copied in at each use
    this.Pall = new Float64Array(this.d2fs !== null || this.dfs !== null ? model.np * (1 + sens.length) : 0)
    sens.forEach((sp, j) => { if (this.Pall.length > 0 && sp.param >= 0) this.Pall[(j + 1) * model.np + sp.param] = 1 })
    this.duAt = new Float64Array(Math.max(1, this.nuu))
    this.d2 = new Float64Array(model.nx)
  }

  f(t: number, z: Float64Array, dz: Float64Array): void {
    const { model, p, u } = this
    this.inputs.eval(t, u)
    model.rhs(t, z, p, u, dz)
    if (this.ns === 0) return
    const dfs = this.dfs
    if (dfs !== null) {
      // the generated right-hand sides of all sensitivities (no ∂f/∂x, ∂f/∂p formed)
      const { Pall, Uf, nuu } = this
      for (let k = 0; k < model.np; k++) Pall[k] = p[k]
      for (let k = 0; k < nuu; k++) Uf[k] = u[k]
      if (this.needFu) {
        this.inputs.slope(this.du)
        for (let j = 0; j < this.ns; j++) this.delayDirection(j, Uf, (j + 2) * nuu, this.du)
      }
      dfs(t, z, Pall, Uf, this.ns, dz)
      return
    }
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
    const Fp = this.Fp
    const ns = this.ns
    const paramOf = this.paramOf
    // s_j' = ∂f/∂θ_j + J s_j, block by block, each row's sum kept in a register
    for (let j = 0; j < ns; j++) {
      const off = (j + 1) * nx
      const pj = paramOf[j]
      for (let i = 0; i < nx; i++) {
        const r = i * nx
        let acc = pj >= 0 ? Fp[i * np + pj] : 0
        for (let k = 0; k < nx; k++) acc += J[r + k] * z[off + k]
        dz[off + i] = acc
      }
    }
    // a delay parameter's ∂f/∂tau term (only sheets with delayed inputs have one)
    if (!this.needFu) return
    for (let j = 0; j < ns; j++) {
      if (this.delayed[j] !== 1) continue
      const off = (j + 1) * nx
      const slots = this.sens[j].delaySlots
      for (let i = 0; i < nx; i++) {
        let acc = 0
        for (let q = 0; q < slots.length; q++) acc += this.Fu[i * this.nuu + slots[q]] * this.du[slots[q]]
        dz[off + i] -= acc / spt
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
   * Packs the arguments of d2fs (or of d2f per sensitivity j, for models without d2fs) at (t, z):
   * w = (s_j, e_θj, r_j) with r_j = −u'/s on a delay parameter's slots (the ∂f/∂tau term of f
   * above). Called once per step.
   */
  coupleAt(t: number, z: Float64Array): void {
    const ns = this.ns
    if (ns === 0) return
    const { model, nuu, duAt } = this
    const nx = this.nBlock
    const np = model.np
    this.tAt = t
    this.inputs.eval(t, this.u)
    if (nuu > 0) this.inputs.slope(duAt)
    if (this.d2fs !== null) {
      // plain loops: subarray views would allocate at every step
      const zAt = this.zAt
      for (let i = 0; i < this.n; i++) zAt[i] = z[i]
      const P = this.Pall
      for (let k = 0; k < np; k++) P[k] = this.p[k]
      const U = this.Uall
      for (let k = 0; k < nuu; k++) U[k] = this.u[k]
      if (this.needFu) for (let j = 0; j < ns; j++) this.delayDirection(j, U, (j + 2) * nuu, duAt)
      return
    }
    for (let j = 0; j < ns; j++) {
      const X = this.Xj[j]
      const P = this.Pj[j]
      const U = this.Uj[j]
      const off = (j + 1) * nx
      for (let i = 0; i < nx; i++) {
        X[i] = z[i]
        X[nx + i] = z[off + i]
      }
      for (let k = 0; k < np; k++) {
        P[k] = this.p[k]
        P[np + k] = 0
      }
      if (this.paramOf[j] >= 0) P[np + this.paramOf[j]] = 1
      for (let k = 0; k < nuu; k++) {
        U[k] = this.u[k]
        U[nuu + k] = 0
      }
      this.delayDirection(j, U, nuu, duAt)
    }
  }

  /** r_j = −u'/s (slopes du) on sensitivity j's delayed slots, into U from `at` */
  private delayDirection(j: number, U: Float64Array, at: number, du: Float64Array): void {
    const slots = this.sens[j].delaySlots
    const spt = this.model.secondsPerTimeUnit
    for (let q = 0; q < slots.length; q++) U[at + slots[q]] = -du[slots[q]] / spt
  }

  /**
   * M_j·v + (∂/∂t of block j)·vt for each sensitivity j at the point of `coupleAt`, exactly, from
   * the sheet's generated second directional derivative (d2fs in one call, else d2f per sensitivity;
   * coupling-codegen.ts): the second direction is (v, vt, vt·u') in (x, t, u): the inputs move with
   * t at their interval's slope.
   */
  couple(v: Float64Array, vt: number, out: Float64Array): void {
    const ns = this.ns
    if (ns === 0) return
    const { model, d2, nuu, duAt } = this
    const nx = this.nBlock
    const t = this.tAt
    const all = this.d2fs
    if (all !== null) {
      const U = this.Uall
      for (let k = 0; k < nuu; k++) U[nuu + k] = vt * duAt[k]
      all(t, this.zAt, this.Pall, U, v, vt, ns, out)
      return
    }
    for (let j = 0; j < ns; j++) {
      const X = this.Xj[j]
      const U = this.Uj[j]
      for (let i = 0; i < nx; i++) X[2 * nx + i] = v[i]
      X[3 * nx] = vt
      for (let k = 0; k < nuu; k++) U[2 * nuu + k] = vt * duAt[k]
      model.d2f(t, X, this.Pj[j], U, d2)
      const off = (j + 1) * nx
      for (let i = 0; i < nx; i++) out[off + i] += d2[i]
    }
  }
}
