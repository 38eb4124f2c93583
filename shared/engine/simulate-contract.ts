/**
 * Contract between the simulation engine (shared/engine) and its callers (fit, CLI, server).
 * All values in a compiled model's internal units (see shared/sheet/compiled.ts); time in the
 * sheet's time unit.
 */
export type SolverName = 'auto' | 'rk45' | 'odex' | 'stiff'

import type { InputTrace } from '../data/traces'

export type { InputTrace }

export interface SimulationRequest {
  /** start time (default 0) */
  t0?: number
  /** output times, non-decreasing, all >= t0 */
  tOut: Float64Array
  /** one entry per model input (by index); null or missing: the sheet's value */
  inputs?: (InputTrace | null)[]
  /** parameter vector (np); default: the sheet's values */
  p?: Float64Array
  /** initial state (nx); default: the sheet's initial values (steady states solved) */
  x0?: Float64Array
  /** forward sensitivities wanted: parameter indices and state indices (initial values) */
  sensitivities?: { params: number[]; initialStates: number[]; errorControl?: boolean }
  solver?: SolverName
  /** relative tolerance: one number, or one per state (added: per-state form) */
  rtol?: number | Float64Array
  /** absolute tolerance: one number, or one per state, in each state's internal units */
  atol?: number | Float64Array
  maxSteps?: number
  /** wall-clock budget in ms */
  timeBudgetMs?: number
  signal?: AbortSignal
}

export interface SimulationStats {
  method: string
  /** true when `auto` switched to the stiff method */
  switched: boolean
  steps: number
  rejected: number
  rhsEvals: number
  jacEvals: number
  luDecomps: number
  elapsedMs: number
}

export interface SimulationResult {
  t: Float64Array
  /** nt*ny, row per output time */
  y: Float64Array
  /** nt*nx */
  x: Float64Array
  /** sensitivities ∂y/∂θ at each output time: nt*ny*ns, θ = [params..., initialStates...] */
  dy: Float64Array | null
  /** ∂x/∂θ: nt*nx*ns */
  dx: Float64Array | null
  /** the initial state actually used (after a steady-state solve) */
  x0: Float64Array
  stats: SimulationStats
  warnings: string[]
  /**
   * sheets with events: every event that fired, in time order (time, event index, its line) and, with
   * sensitivities, the event time's sensitivities dτ/dθ in the order of θ
   */
  events?: { t: number; event: number; line: number; dt: Float64Array | null }[]
}
