/**
 * The work buffers of one simulation (continuous or discrete), cached per compiled model and
 * sensitivity layout so that repeated calls (a fit) allocate nothing beyond the result arrays, and
 * `writeOut`, which fills one output row of a result from an (augmented) state vector.
 * Vectors named z are augmented states z = [x, s_1, …, s_ns] (states, then one sensitivity block of
 * nx per sensitivity); u holds the nu input slots followed by the nd delayed-read slots.
 */
import type { CompiledModel } from '../sheet/compiled'
import type { SimulationResult, SolverName } from './simulate-contract'
import type { InputSet } from './inputs'
import { ModelSystem, type SensSpec } from './system'
import type { OdeSolver, Tolerances } from './solvers/types'
import { EventMonitor } from './events'

export interface Workspace {
  sys: ModelSystem
  /** one solver per method, created on first use and reused */
  solvers: Partial<Record<SolverName, OdeSolver>>
  tol: Tolerances
  /** initial augmented state */
  zStart: Float64Array
  /** an augmented state to fill: the dense-output state at an output time (continuous), the current state (discrete) */
  zScratch: Float64Array
  /** input values at the time being handled (an output time, or the left limit at a breakpoint) */
  uAt: Float64Array
  /** their time derivatives at an output time; the right limit of the inputs at a breakpoint */
  duAt: Float64Array
  /** outputs y at an output time */
  yAt: Float64Array
  /** output Jacobians ∂g/∂x (ny×nx), ∂g/∂p (ny×np), ∂g/∂u (ny×(nu+nd)), row-major */
  dgdx: Float64Array
  dgdp: Float64Array
  dgdu: Float64Array
  /** right-hand side f just before and just after a delayed hold trace jumps (tauJumps) */
  fLeft: Float64Array
  fRight: Float64Array
  /** the inputs with only the jumping delayed slots moved to their right limit */
  uRight: Float64Array
  /** input slopes left and right of a breakpoint */
  slopeLeft: Float64Array
  slopeRight: Float64Array
  /** the states' names, for error messages */
  stateNames: string[]
  /** the augmented state at an event time (sheets with events) */
  zEvent: Float64Array
  /** zero-crossing monitor of the sheet's events, or null when it has none */
  events: EventMonitor | null
}

const cache = new WeakMap<CompiledModel, Map<string, Workspace>>()

/** The cached workspace of the model for this sensitivity layout (at most 17 layouts kept per model). */
export function workspace(model: CompiledModel, sens: SensSpec[]): Workspace {
  let m = cache.get(model)
  if (!m) {
    m = new Map()
    cache.set(model, m)
  }
  const key = sens.map((s) => `${s.param}:${s.state}`).join(',')
  let ws = m.get(key)
  if (!ws) {
    const sys = new ModelSystem(model, sens)
    const nuu = model.nu + model.nd
    ws = {
      sys,
      solvers: {},
      tol: { rtol: new Float64Array(model.nx), atol: new Float64Array(model.nx), weight: new Float64Array(sys.n) },
      zStart: new Float64Array(sys.n),
      zScratch: new Float64Array(sys.n),
      uAt: new Float64Array(Math.max(1, nuu)),
      duAt: new Float64Array(Math.max(1, nuu)),
      yAt: new Float64Array(Math.max(1, model.ny)),
      dgdx: new Float64Array(Math.max(1, model.ny * model.nx)),
      dgdp: new Float64Array(Math.max(1, model.ny * model.np)),
      dgdu: new Float64Array(Math.max(1, model.ny * nuu)),
      fLeft: new Float64Array(model.nx),
      fRight: new Float64Array(model.nx),
      uRight: new Float64Array(Math.max(1, nuu)),
      slopeLeft: new Float64Array(Math.max(1, nuu)),
      slopeRight: new Float64Array(Math.max(1, nuu)),
      stateNames: model.states.map((s) => s.name),
      zEvent: new Float64Array(sys.n),
      events: model.ne > 0 ? new EventMonitor(model, sys) : null,
    }
    if (m.size > 16) m.clear()
    m.set(key, ws)
  }
  return ws
}

/**
 * Outputs and sensitivities at output index k from the augmented state z:
 * ∂y/∂θ_j = ∂g/∂x · s_j + ∂g/∂p_j − Σ_delayed ∂g/∂u · u̇ / (seconds per time unit).
 */
export function writeOut(model: CompiledModel, ws: Workspace, inputs: InputSet, z: Float64Array, k: number, t: number, res: SimulationResult): void {
  const { nx, ny, np } = model
  const nuu = model.nu + model.nd
  const { uAt: u, duAt: du, yAt: y, dgdx, dgdp, dgdu } = ws
  const sens = ws.sys.sens
  const ns = sens.length
  const p = ws.sys.p
  inputs.evalAt(t, u, ns > 0 ? du : null)
  model.outputsFn(t, z, p, u, y)
  for (let i = 0; i < nx; i++) res.x[k * nx + i] = z[i]
  for (let i = 0; i < ny; i++) res.y[k * ny + i] = y[i]
  if (ns === 0 || res.dy === null || res.dx === null) return
  model.dgdx(t, z, p, u, dgdx)
  model.dgdp(t, z, p, u, dgdp)
  if (nuu > 0) model.dgdu(t, z, p, u, dgdu)
  const spt = model.secondsPerTimeUnit
  for (let j = 0; j < ns; j++) {
    const sj = sens[j]
    const off = (j + 1) * nx
    for (let i = 0; i < nx; i++) res.dx[(k * nx + i) * ns + j] = z[off + i]
    for (let i = 0; i < ny; i++) {
      let acc = sj.param >= 0 ? dgdp[i * np + sj.param] : 0
      for (let q = 0; q < nx; q++) acc += dgdx[i * nx + q] * z[off + q]
      for (const slot of sj.delaySlots) acc -= (dgdu[i * nuu + slot] * du[slot]) / spt
      res.dy[(k * ny + i) * ns + j] = acc
    }
  }
}

