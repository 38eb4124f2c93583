/**
 * The compiled form of a model sheet: the contract between shared/sheet (which produces it)
 * and shared/engine (which integrates and fits it). Pure data plus generated functions.
 *
 * Internal units: every state, parameter, constant, input and output value handled by a
 * compiled model is in coherent SI units (offset units such as degC are converted to kelvin).
 * Time `t` is in the sheet's own time unit (`timeUnit`, `secondsPerTimeUnit` seconds each), so
 * `rhs` returns d(x_SI)/d(t_sheet). Each symbol carries the affine map from its declared unit:
 * internal = declared * scale + offset.
 *
 * Vector layouts (all Float64Array, preallocated by the caller):
 *   x  : nx states in declaration order
 *   p  : np parameters in declaration order (fixed and free alike)
 *   u  : nu inputs in declaration order, followed by nd delayed-input slots;
 *        slot nu + k holds input `delays[k].input` read at t - tau_k
 *   Jacobians are row-major: dfdx[i*nx + j] = ∂f_i/∂x_j, dfdp[i*np + j], dfdu[i*(nu+nd) + j],
 *   dgdx[i*nx + j] for outputs, and so on.
 */
export type TimeUnit = 's' | 'min' | 'h'

export interface UnitMap {
  /** The unit as written in the sheet ('' when none was written). */
  unit: string
  /** internal = declared * scale + offset */
  scale: number
  offset: number
}

export interface StateInfo extends UnitMap {
  name: string
  description: string
  /** initial value, internal units */
  initial: number
  /** the initial value is estimated by a fit */
  estimate: boolean
  /** the initial value is the steady state near `initial` */
  steady: boolean
  lower: number | null
  upper: number | null
  line: number
}

export interface ParamInfo extends UnitMap {
  name: string
  description: string
  value: number
  lower: number | null
  upper: number | null
  fixed: boolean
  line: number
}

export interface InputInfo extends UnitMap {
  name: string
  description: string
  /** value used when no trace is given, internal units */
  value: number
  interp: 'linear' | 'hold'
  line: number
}

export interface OutputInfo extends UnitMap {
  name: string
  description: string
  /** noise standard deviation in internal units, or null when the sheet gives none */
  sigma: number | null
  line: number
}

export interface DelayInfo {
  /** index of the delayed input in the input list */
  input: number
  /** the delay: a parameter (index into p, value in internal units = seconds) or a constant */
  param: number | null
  /** the delay in internal units (seconds) when it is a constant */
  constValue: number
}

export type VecFn = (t: number, x: Float64Array, p: Float64Array, u: Float64Array, out: Float64Array) => void
/**
 * `d2fs(t, x, p, u, v, vt, ns, out)`: the coupling term of all ns sensitivities in one call, added
 * into out at each sensitivity block; x = [x, s_1…], p = [p, q_1…], u = [u, ν, r_1…] (coupling-codegen.ts)
 */
/**
 * `dfs(t, x, p, u, ns, out)`: the sensitivities' right-hand sides ∂f/∂x·s_j + ∂f/∂p·q_j + ∂f/∂u·r_j
 * of all ns sensitivities, into out at each sensitivity block; x, p, u as for d2fs (coupling-codegen.ts)
 */
export type SensitivityRhsFn = (t: number, x: Float64Array, p: Float64Array, u: Float64Array, ns: number, out: Float64Array) => void
export type CouplingAllFn = (t: number, x: Float64Array, p: Float64Array, u: Float64Array, v: Float64Array, vt: number, ns: number, out: Float64Array) => void

/** A switch position the equations read (see shared/sheet/events.ts). */
export interface ModeInfo {
  name: string
  description: string
  /** position at the start of every simulation */
  initial: number
  line: number
}

/** One event: where its condition h = A − B crosses zero, and what it sets. */
export interface EventInfo {
  /** 'down': h from > 0 to <= 0; 'up': from < 0 to >= 0; 'either' */
  direction: 'up' | 'down' | 'either'
  /** the condition as written, for messages */
  text: string
  description: string
  line: number
  /** states the event assigns (their new values come from `events.resets[k].x`) */
  states: number[]
  /** modes the event sets, and their new positions */
  modes: { mode: number; value: number }[]
}

/** Generated functions of the events (ne conditions; per event the post-event states and their Jacobians). */
export interface EventFunctions {
  /** h, ne values */
  h: VecFn
  /** ∂h/∂x (ne×nx), ∂h/∂p (ne×np), ∂h/∂u (ne×(nu+nd)), ∂h/∂t (ne; per sheet time unit) */
  dhdx: VecFn
  dhdp: VecFn
  dhdu: VecFn
  dhdt: VecFn
  /** per event: x⁺ = r(t, x⁻, p, u) for all nx states (unassigned states keep their value) and its Jacobians */
  resets: { x: VecFn; dx: VecFn; dp: VecFn; du: VecFn; dt: VecFn }[]
}

/** What a sheet says of itself as a whole: the same in its parsed form (model.ts) and its compiled one. */
export interface SheetHeader {
  /** hash of the sheet text */
  hash: string
  title: string
  kind: 'continuous' | 'discrete'
  timeUnit: TimeUnit
  secondsPerTimeUnit: number
  /** discrete sheets: the sample time in sheet time units */
  sampleTime: number | null
}

export interface CompiledModel extends SheetHeader {
  states: StateInfo[]
  params: ParamInfo[]
  inputs: InputInfo[]
  outputs: OutputInfo[]
  delays: DelayInfo[]
  nx: number
  np: number
  nu: number
  nd: number
  ny: number
  /** continuous: dx/dt; discrete: x(k+1) */
  rhs: VecFn
  outputsFn: VecFn
  /** ∂f/∂x, nx*nx */
  dfdx: VecFn
  /** ∂f/∂p, nx*np */
  dfdp: VecFn
  /** ∂f/∂u, nx*(nu+nd) */
  dfdu: VecFn
  /** explicit ∂f/∂t (through `t` only; the engine adds the inputs' part through dfdu), nx */
  dfdt: VecFn
  /** ∂g/∂x, ny*nx */
  dgdx: VecFn
  /** ∂g/∂p, ny*np */
  dgdp: VecFn
  /** ∂g/∂u, ny*(nu+nd) */
  dgdu: VecFn
  /**
   * The sensitivities' coupling term, nx values: the second directional derivative
   * D_v D_w f with w = (s, q, r) in (x, p, u) and v = (v_x, τ, ν) in (x, t, u), called with packed
   * arrays X = [x, s, v_x, τ] (3nx + 1), P = [p, q] (2np), U = [u, r, ν] (3(nu+nd))
   * (coupling-codegen.ts).
   */
  d2f: VecFn
  /** d2f for all sensitivities in one call; absent in hand-built models and when too large to generate */
  d2fs?: CouplingAllFn
  /** the sensitivities' right-hand sides in one call; absent in hand-built models and when too large to generate */
  dfs?: SensitivityRhsFn
  /** switch positions (modes) and events; nm = modes.length, ne = events.length */
  modes: ModeInfo[]
  events: EventInfo[]
  nm: number
  ne: number
  /**
   * The current mode positions every generated function reads (length nm). The engine sets them to
   * the initial positions when a simulation starts and ends, and changes them at events.
   */
  modeValues: Float64Array
  /** present when ne > 0 */
  eventFns: EventFunctions | null
  /** the generated JavaScript source, for inspection */
  source: string
}

/** A value in a symbol's declared unit → internal (SI) units. */
export const toInternal = (u: Pick<UnitMap, 'scale' | 'offset'>, declared: number) => declared * u.scale + u.offset
/** An internal (SI) value → the symbol's declared unit. */
export const toDeclared = (u: Pick<UnitMap, 'scale' | 'offset'>, internal: number) => (internal - u.offset) / u.scale
