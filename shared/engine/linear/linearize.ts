/**
 * Linearisation of a compiled sheet at a point (x, u, p, t) from its exact symbolic Jacobians
 * (shared/sheet/codegen.ts):
 *   δx' = A δx + B δu,  δy = C δx + D δu     (continuous sheets; discrete: δx(k+1) = A δx(k) + B δu(k))
 *   A = ∂f/∂x, B = ∂f/∂u, C = ∂g/∂x, D = ∂g/∂u.
 * The matrices are returned in the sheet's declared units (deviation variables, so unit offsets drop
 * out): A_ij = ∂f_i/∂x_j · s_j / s_i with s the declared→internal scale of each symbol; time stays
 * in the sheet's time unit. A delayed input slot's columns are kept apart (`delays`) so that the
 * frequency response can apply e^(−sτ); B and D add them in, which is exact at steady state (DC) only.
 */
import type { CompiledModel } from '../../sheet/compiled'
import { toDeclared } from '../../sheet/compiled'

export interface DelayedChannel {
  /** input index */
  input: number
  /** the delay, sheet time units */
  tau: number
  /** ∂f/∂u_delayed (nx), ∂g/∂u_delayed (ny), declared units */
  b: Float64Array
  d: Float64Array
}

export interface LinearModel {
  kind: 'continuous' | 'discrete'
  /** discrete sheets: the sample time, sheet time units */
  sampleTime: number | null
  timeUnit: string
  nx: number
  nu: number
  ny: number
  states: { name: string; unit: string }[]
  inputs: { name: string; unit: string }[]
  outputs: { name: string; unit: string }[]
  /** the point, declared units */
  x: Float64Array
  u: Float64Array
  y: Float64Array
  /** f at the point (declared units per time unit; zero at an operating point of a continuous sheet) */
  drift: Float64Array
  /** row-major, declared units; B and D include the delayed channels */
  A: Float64Array
  B: Float64Array
  C: Float64Array
  D: Float64Array
  delays: DelayedChannel[]
}

/** p: parameters, u: all slots (nu + nd), x: states, all internal units; t in sheet time units */
export function linearize(model: CompiledModel, t: number, x: Float64Array, p: Float64Array, u: Float64Array): LinearModel {
  const { nx, nu, ny, nd } = model
  const nuu = nu + nd
  const fx = new Float64Array(nx * nx)
  const fu = new Float64Array(Math.max(1, nx * nuu))
  const gx = new Float64Array(Math.max(1, ny * nx))
  const gu = new Float64Array(Math.max(1, ny * nuu))
  const f = new Float64Array(nx)
  const y = new Float64Array(ny)
  model.dfdx(t, x, p, u, fx)
  if (nuu > 0) model.dfdu(t, x, p, u, fu)
  if (ny > 0) model.dgdx(t, x, p, u, gx)
  if (ny > 0 && nuu > 0) model.dgdu(t, x, p, u, gu)
  model.rhs(t, x, p, u, f)
  if (ny > 0) model.outputsFn(t, x, p, u, y)
  const sx = model.states.map((s) => s.scale)
  const su = model.inputs.map((s) => s.scale)
  const sy = model.outputs.map((s) => s.scale)
  const A = new Float64Array(nx * nx)
  const B = new Float64Array(nx * nu)
  const C = new Float64Array(ny * nx)
  const D = new Float64Array(ny * nu)
  for (let i = 0; i < nx; i++) for (let j = 0; j < nx; j++) A[i * nx + j] = (fx[i * nx + j] * sx[j]) / sx[i]
  for (let i = 0; i < ny; i++) for (let j = 0; j < nx; j++) C[i * nx + j] = (gx[i * nx + j] * sx[j]) / sy[i]
  for (let i = 0; i < nx; i++) for (let j = 0; j < nu; j++) B[i * nu + j] = (fu[i * nuu + j] * su[j]) / sx[i]
  for (let i = 0; i < ny; i++) for (let j = 0; j < nu; j++) D[i * nu + j] = (gu[i * nuu + j] * su[j]) / sy[i]
  const delays: DelayedChannel[] = model.delays.map((dl, k) => {
    const slot = nu + k
    const j = dl.input
    const b = Float64Array.from({ length: nx }, (_, i) => (fu[i * nuu + slot] * su[j]) / sx[i])
    const d = Float64Array.from({ length: ny }, (_, i) => (gu[i * nuu + slot] * su[j]) / sy[i])
    for (let i = 0; i < nx; i++) B[i * nu + j] += b[i]
    for (let i = 0; i < ny; i++) D[i * nu + j] += d[i]
    const tauSeconds = dl.param !== null ? p[dl.param] : dl.constValue
    return { input: j, tau: tauSeconds / model.secondsPerTimeUnit, b, d }
  })
  const discrete = model.kind === 'discrete'
  return {
    kind: model.kind,
    sampleTime: model.sampleTime,
    timeUnit: model.timeUnit,
    nx, nu, ny,
    states: model.states.map((s) => ({ name: s.name, unit: s.unit })),
    inputs: model.inputs.map((s) => ({ name: s.name, unit: s.unit })),
    outputs: model.outputs.map((s) => ({ name: s.name, unit: s.unit })),
    x: Float64Array.from(model.states, (s, i) => toDeclared(s, x[i])),
    u: Float64Array.from(model.inputs, (s, i) => toDeclared(s, u[i])),
    y: Float64Array.from(model.outputs, (s, i) => toDeclared(s, y[i])),
    drift: Float64Array.from({ length: nx }, (_, i) => (discrete ? f[i] - x[i] : f[i]) / sx[i]),
    A, B, C, D, delays,
  }
}
