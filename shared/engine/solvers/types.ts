/**
 * The one interface every integration method implements.
 *
 * A system has `n` components made of `blocks` blocks of `nBlock` components each: block 0 holds
 * the states, the further blocks forward sensitivities (one block per parameter or initial state).
 * The stiff method factors the state block's nBlock×nBlock matrix once and solves the block
 * lower-triangular augmented system with it, adding the exact coupling of each sensitivity block
 * to the states (`couple`, see rosenbrock.ts).
 */
export interface OdeSystem {
  n: number
  nBlock: number
  /** dz/dt into dz (length n) */
  f(t: number, z: Float64Array, dz: Float64Array): void
  /** state-block Jacobian ∂f/∂x (nBlock², row-major) and ∂f/∂t of the state block (ft[0..nBlock)) */
  jac(t: number, z: Float64Array, J: Float64Array, ft: Float64Array): void
  /**
   * Fixes the point (t, z) at which `couple` takes the sensitivity blocks' partial derivatives (the
   * stiff method calls it once per step, at the step's start, then `couple` once per stage).
   */
  coupleAt(t: number, z: Float64Array): void
  /**
   * The sensitivity blocks' dependence on the states and the time at the point fixed by `coupleAt`:
   * for every block b ≥ 1 adds
   *   (∂f_b/∂x)·v + (∂f_b/∂t)·vt      (v = v[0..nBlock); the partials hold block b itself fixed)
   * to out[b·nBlock … (b+1)·nBlock). Reads all of v before writing, so out may be v's own array.
   * Nothing to do without sensitivity blocks.
   */
  couple(v: Float64Array, vt: number, out: Float64Array): void
}

/**
 * Error control: component i of block b is measured against
 *   sc = (atol[i] + rtol[i]·max(|z_i|, |z1_i|, w·|z_k|, w·|z1_k|)) / w,   w = weight[k], k = b·nBlock + i
 * (for the states, b = 0, the last two terms are left out), i.e. a sensitivity ∂x_i/∂θ times |θ| is
 * measured in the state's units, against the state's size or its own, whichever is larger.
 * weight 0 leaves a component out of error control.
 */
export interface Tolerances {
  /** per state (length nBlock) */
  rtol: Float64Array
  /** per state (length nBlock), in each state's units */
  atol: Float64Array
  /** per component (length n) */
  weight: Float64Array
  /**
   * the stiff method measures the sensitivity components too (with `weight`); otherwise its error
   * norm takes the states only (partial error control, see rosenbrock.ts). The explicit methods
   * always use `weight`.
   */
  stiffSensitivities?: boolean
}

export interface SolverCounters {
  steps: number
  rejected: number
  rhsEvals: number
  jacEvals: number
  luDecomps: number
}

export interface SolverLimits {
  maxSteps: number
  /** wall-clock deadline (performance.now() milliseconds), or Infinity */
  deadline: number
  budgetMs: number
  signal: AbortSignal | null
  /** names of the nBlock states, for error messages */
  stateNames: string[]
  /** fixed step size (order-of-convergence studies): no error control when > 0 */
  fixedStep: number
}

/** Called after each accepted step [tOld, tNew]; `dense` is valid on that interval during the call. */
export type StepObserver = (tOld: number, tNew: number) => void

export interface OdeSolver {
  readonly name: string
  readonly counters: SolverCounters
  /** current time and solution (after the last accepted step) */
  readonly t: number
  readonly z: Float64Array
  /** (re)start at (t, z); h is the step size to try first (0: choose one) */
  start(sys: OdeSystem, tol: Tolerances, limits: SolverLimits, t: number, z: Float64Array, h: number): void
  /**
   * The time `t` has reached a breakpoint: the right-hand side may jump here. Keep the step size,
   * refresh whatever derivative is carried over (no fresh start-up).
   */
  breakpoint(): void
  /**
   * Continue from (t, z) after the state jumped there (an event cut the last step): counters and the
   * method in use are kept, nothing is carried over from the last step but the step size h to try.
   */
  restartAt(t: number, z: Float64Array, h: number): void
  /** one accepted step, never beyond tStop (lands exactly on it when it is reached) */
  step(tStop: number): void
  /** integrate to exactly tStop, calling obs after each accepted step */
  advance(tStop: number, obs: StepObserver | null): void
  /** the solution at time t inside the last accepted step, into out (length n) */
  dense(t: number, out: Float64Array): void
  /** the step size the next step will try */
  readonly h: number
}

export function newCounters(): SolverCounters {
  return { steps: 0, rejected: 0, rhsEvals: 0, jacEvals: 0, luDecomps: 0 }
}

export function resetCounters(c: SolverCounters): void {
  c.steps = 0
  c.rejected = 0
  c.rhsEvals = 0
  c.jacEvals = 0
  c.luDecomps = 0
}

export const now: () => number =
  typeof globalThis.performance !== 'undefined' && typeof globalThis.performance.now === 'function'
    ? () => globalThis.performance.now()
    : () => Date.now()
