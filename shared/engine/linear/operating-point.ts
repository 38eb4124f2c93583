/**
 * Operating points: constant states x* with f(x*, u, p) = 0 (continuous sheets) or x* = f(x*, u, p)
 * (discrete sheets) for given constant inputs.
 *
 * - Newton's method with the sheet's exact Jacobian ∂f/∂x and backtracking on the residual norm
 *   (Dennis & Schnabel, Numerical Methods for Unconstrained Optimization and Nonlinear Equations,
 *   1983, Algorithm 6.3.5, simplified to step halving). States with bounds in the sheet are kept inside
 *   them by projecting each trial point onto the box (a projected Newton step; Kelley, Iterative
 *   Methods for Optimization, 1999, Sec. 5.5, used here for equations).
 * - When Newton fails from a start, a Newton homotopy H(x, λ) = F(x) − (1 − λ)·F(x_s) is followed from
 *   λ = 0 (solved by the start x_s) to λ = 1 by natural-parameter continuation with Newton correctors
 *   and adaptive steps in λ (Allgower & Georg, Introduction to Numerical Continuation Methods, SIAM
 *   2003, Sec. 1.1 and Ch. 2). A turning point in λ stops it: then no operating point is reported from
 *   that start.
 * - When Newton fails from the given start at the requested inputs u₁ and the sheet's own inputs u₀
 *   differ, the inputs are stepped first: a steady state x₀ at u₀ (Newton from the start, or the end
 *   state of a simulation at u₀, polished by Newton) is carried along u(λ) = u₀ + λ (u₁ − u₀), λ: 0 → 1,
 *   by natural-parameter continuation with Newton correctors, halving the step in λ when a corrector
 *   fails and lengthening it after a success (Allgower & Georg 2003, Sec. 1.1; Seydel, Practical
 *   Bifurcation and Stability Analysis, 3rd ed. 2010, Sec. 4.1). It follows a physical branch of
 *   operating points; a fold (turning point) in u stops it, and the state homotopy above is tried.
 * - Several starts (the guess, scaled copies of it, points inside the states' bounds) are tried so that
 *   more than one operating point is noticed; distinct solutions are reported with their stability.
 */
import type { CompiledModel } from '../../sheet/compiled'
import { luFactor, luSolve } from '../solvers/lu'
import { eigenvalues } from './eigen'
import { simulate } from '../simulate'
import { SimulationError } from '../errors'

export interface OperatingPointRequest {
  /** parameters, internal units */
  p: Float64Array
  /** all input slots (nu + nd), internal units: a delayed slot holds its input's constant value */
  u: Float64Array
  /** start of the search, internal units (default: the sheet's initial states) */
  guess?: Float64Array
  /** time passed to the right-hand side (sheets that read t), sheet time units */
  t?: number
  /** most starts tried (default 9) */
  maxStarts?: number
  /**
   * the sheet's own input slots: when Newton fails from the start at `u`, the operating point is sought
   * by stepping the inputs from a steady state at these (absent or equal to `u`: not tried)
   */
  from?: Float64Array
}

export interface OperatingPointSolution {
  x: Float64Array
  /** 2-norm of the residual at x */
  residual: number
  iterations: number
  /** continuation: the state homotopy; input-continuation: inputs stepped from a steady state at the sheet's inputs */
  method: 'newton' | 'continuation' | 'input-continuation'
  /** from the eigenvalues of the Jacobian; null when they could not be computed */
  stable: boolean | null
}

export interface OperatingPointResult {
  status: 'unique' | 'several' | 'none'
  /** the solution nearest the guess first */
  solutions: OperatingPointSolution[]
  starts: number
  messages: string[]
}

const MAX_NEWTON = 50

class Residual {
  readonly n: number
  readonly f: Float64Array
  readonly J: Float64Array
  readonly lu: Float64Array
  readonly piv: Int32Array
  readonly lower: Float64Array
  readonly upper: Float64Array
  /** F(x_s)·(1 − λ), subtracted during continuation */
  readonly shift: Float64Array
  constructor(readonly model: CompiledModel, readonly p: Float64Array, readonly u: Float64Array, readonly t: number) {
    const n = model.nx
    this.n = n
    this.f = new Float64Array(n)
    this.J = new Float64Array(n * n)
    this.lu = new Float64Array(n * n)
    this.piv = new Int32Array(n)
    this.lower = Float64Array.from(model.states, (s) => s.lower ?? -Infinity)
    this.upper = Float64Array.from(model.states, (s) => s.upper ?? Infinity)
    this.shift = new Float64Array(n)
  }
  /** r = F(x) − shift; returns ‖r‖₂ */
  eval(x: Float64Array, r: Float64Array): number {
    this.model.rhs(this.t, x, this.p, this.u, r)
    const discrete = this.model.kind === 'discrete'
    let s = 0
    for (let i = 0; i < this.n; i++) {
      r[i] = (discrete ? r[i] - x[i] : r[i]) - this.shift[i]
      s += r[i] * r[i]
    }
    return Math.sqrt(s)
  }
  /** factor ∂F/∂x at x into lu; false when singular */
  factor(x: Float64Array): boolean {
    const n = this.n
    this.model.dfdx(this.t, x, this.p, this.u, this.J)
    for (let i = 0; i < n * n; i++) this.lu[i] = this.J[i]
    if (this.model.kind === 'discrete') for (let i = 0; i < n; i++) this.lu[i * n + i] -= 1
    return luFactor(this.lu, n, this.piv)
  }
  project(x: Float64Array): void {
    for (let i = 0; i < this.n; i++) x[i] = Math.min(this.upper[i], Math.max(this.lower[i], x[i]))
  }
}

/** Newton from x (in place). Returns iterations used, or −1 when it fails. */
function newton(R: Residual, x: Float64Array, maxIter: number): number {
  const n = R.n
  const r = new Float64Array(n)
  const dx = new Float64Array(n)
  const xt = new Float64Array(n)
  const rt = new Float64Array(n)
  R.project(x)
  let norm = R.eval(x, r)
  if (!Number.isFinite(norm)) return -1
  for (let it = 0; it < maxIter; it++) {
    if (norm === 0) return it
    if (!R.factor(x)) return -1
    for (let i = 0; i < n; i++) dx[i] = -r[i]
    luSolve(R.lu, n, R.piv, dx)
    let lambda = 1
    let accepted = false
    let tn = Infinity
    for (let half = 0; half < 30; half++) {
      for (let i = 0; i < n; i++) xt[i] = x[i] + lambda * dx[i]
      R.project(xt)
      tn = R.eval(xt, rt)
      if (Number.isFinite(tn) && tn < norm * (1 - 1e-4 * lambda)) { accepted = true; break }
      lambda *= 0.5
    }
    let small = true
    for (let i = 0; i < n; i++) if (Math.abs(xt[i] - x[i]) > 1e-11 * Math.max(Math.abs(x[i]), Math.abs(xt[i]), 1e-300)) small = false
    if (!accepted) {
      // no descent: done only if the full step was already negligible (residual at rounding level)
      let fullSmall = true
      for (let i = 0; i < n; i++) if (Math.abs(dx[i]) > 1e-9 * Math.max(Math.abs(x[i]), 1e-300)) fullSmall = false
      return fullSmall ? it : -1
    }
    x.set(xt)
    r.set(rt)
    norm = tn
    if (small && lambda === 1) return it + 1
  }
  return -1
}

/**
 * Natural-parameter continuation in λ from 0 to 1 with Newton correctors (Allgower & Georg 2003,
 * Sec. 1.1): `place(λ)` moves the equations to λ, Newton (at most `newtonIterations`) corrects x in
 * place; a failed corrector restores x and halves the step, a success lengthens it by `grow` (at most
 * 0.5). Returns the steps and Newton iterations taken, or null when the step fell below `minStep`.
 */
function followPath(
  R: Residual, x: Float64Array, place: (lambda: number) => void,
  o: { step: number; minStep: number; grow: number; newtonIterations: number },
): { steps: number; iterations: number } | null {
  const xPrev = new Float64Array(x.length)
  let lambda = 0
  let step = o.step
  let steps = 0
  let iterations = 0
  while (lambda < 1) {
    const target = Math.min(1, lambda + step)
    place(target)
    xPrev.set(x)
    const it = newton(R, x, o.newtonIterations)
    if (it < 0) {
      x.set(xPrev)
      step *= 0.5
      if (step < o.minStep) return null
      continue
    }
    iterations += it
    steps++
    lambda = target
    step = Math.min(0.5, step * o.grow)
  }
  return { steps, iterations }
}

/** Newton homotopy from x (in place) to a root of F. Returns Newton iterations used, or −1. */
function continuation(R: Residual, x: Float64Array): number {
  const n = R.n
  const f0 = new Float64Array(n)
  R.shift.fill(0)
  R.eval(x, f0)
  try {
    const path = followPath(R, x, (lambda) => {
      for (let i = 0; i < n; i++) R.shift[i] = (1 - lambda) * f0[i]
    }, { step: 0.1, minStep: 1e-6, grow: 1.5, newtonIterations: 12 })
    if (!path) return -1
    R.shift.fill(0)
    const it = newton(R, x, MAX_NEWTON)
    return it < 0 ? -1 : path.iterations + it
  } finally {
    R.shift.fill(0)
  }
}

const SIM_HORIZONS = [10, 100, 1e3, 1e4, 1e5]

/** Steady states at the inputs uc (all slots) to start an input continuation from: Newton from the guess, then simulated end states. */
function* anchors(model: CompiledModel, R: Residual, guess: Float64Array): Generator<{ x: Float64Array; how: string }> {
  const x = Float64Array.from(guess)
  if (newton(R, x, MAX_NEWTON) >= 0) yield { x, how: "Newton's method from the start" }
  if (model.kind !== 'continuous') return
  const constant: CompiledModel = {
    ...model,
    inputs: model.inputs.map((s, i) => ({ ...s, value: R.u[i] })),
    states: model.states.map((s) => ({ ...s, steady: false })),
  }
  let x0 = Float64Array.from(guess)
  let t0 = 0
  for (const T of SIM_HORIZONS) {
    try {
      const res = simulate(constant, { tOut: Float64Array.of(T), p: R.p, x0, t0, rtol: 1e-8 })
      x0 = res.x.slice(0, model.nx)
      t0 = T
    } catch (e) {
      if (e instanceof SimulationError) return
      throw e
    }
    const xs = Float64Array.from(x0)
    if (newton(R, xs, MAX_NEWTON) >= 0) {
      yield { x: xs, how: `simulating at those inputs to t = ${T} and Newton's method from there` }
      return
    }
  }
}

/**
 * Steps the input slots from u0 to R.u (restored on return) carrying a steady state along; x is set to
 * the result. Returns the steps and Newton iterations taken, or null when the step fell below 1e-5.
 */
function inputContinuation(R: Residual, x: Float64Array, x0: Float64Array, u0: Float64Array, u1: Float64Array): { steps: number; iterations: number } | null {
  const xc = Float64Array.from(x0)
  try {
    const path = followPath(R, xc, (lambda) => {
      for (let i = 0; i < u1.length; i++) R.u[i] = u0[i] + lambda * (u1[i] - u0[i])
    }, { step: 0.25, minStep: 1e-5, grow: 2, newtonIterations: 20 })
    if (!path) return null
    x.set(xc)
    return path
  } finally {
    R.u.set(u1)
  }
}

function startPoints(model: CompiledModel, guess: Float64Array, max: number): Float64Array[] {
  const n = model.nx
  const out: Float64Array[] = [Float64Array.from(guess)]
  for (const k of [0.5, 2, 0.1, 10]) out.push(Float64Array.from(guess, (v) => (v === 0 ? k - 1 : v * k)))
  const bounded = model.states.every((s) => s.lower !== null && s.upper !== null && Number.isFinite(s.lower) && Number.isFinite(s.upper))
  if (bounded && n > 0) {
    for (const q of [0.5, 0.1, 0.9, 0.3, 0.7]) out.push(Float64Array.from(model.states, (s) => s.lower! + q * (s.upper! - s.lower!)))
  }
  return out.slice(0, max)
}

function isStable(model: CompiledModel, R: Residual, x: Float64Array): boolean | null {
  try {
    model.dfdx(R.t, x, R.p, R.u, R.J)
    const ev = eigenvalues(R.J, model.nx)
    if (model.kind === 'discrete') return Array.from(ev.re).every((re, i) => Math.hypot(re, ev.im[i]) < 1)
    return Array.from(ev.re).every((re) => re < 0)
  } catch {
    return null
  }
}

function same(a: Float64Array, b: Float64Array, scale: Float64Array): boolean {
  for (let i = 0; i < a.length; i++) if (Math.abs(a[i] - b[i]) > 1e-6 * Math.max(Math.abs(a[i]), Math.abs(b[i]), scale[i])) return false
  return true
}

export function findOperatingPoints(model: CompiledModel, req: OperatingPointRequest): OperatingPointResult {
  const n = model.nx
  const t = req.t ?? 0
  // a copy of the inputs: an input continuation steps them in place
  const R = new Residual(model, req.p, Float64Array.from(req.u), t)
  const guess = req.guess ?? Float64Array.from(model.states, (s) => s.initial)
  const messages: string[] = []
  if (n === 0) return { status: 'unique', solutions: [{ x: new Float64Array(0), residual: 0, iterations: 0, method: 'newton', stable: true }], starts: 0, messages }
  const starts = startPoints(model, guess, req.maxStarts ?? 9)
  const scale = Float64Array.from(guess, (v) => Math.max(Math.abs(v), 1e-9))
  const found: OperatingPointSolution[] = []
  const r = new Float64Array(n)
  const u1 = Float64Array.from(req.u)
  const u0 = req.from && req.from.some((v, i) => v !== u1[i]) ? req.from : null
  starts.forEach((s, k) => {
    const x = Float64Array.from(s)
    let it = newton(R, x, MAX_NEWTON)
    let method: OperatingPointSolution['method'] = 'newton'
    if (it < 0 && k === 0 && u0) {
      R.u.set(u0)
      let reached: string | null = null
      try {
        for (const a of anchors(model, R, guess)) {
          const c = inputContinuation(R, x, a.x, u0, u1)
          if (c) {
            it = c.iterations
            reached = `Newton's method failed from the start at the requested inputs; the operating point was reached by stepping the inputs from the sheet's values in ${c.steps} continuation steps, starting from the steady state there found by ${a.how}`
            break
          }
          R.u.set(u0)
        }
      } finally {
        R.u.set(u1)
      }
      if (reached) {
        method = 'input-continuation'
        messages.push(reached)
      }
    }
    if (it < 0) {
      x.set(s)
      R.project(x)
      it = continuation(R, x)
      method = 'continuation'
      if (it >= 0 && k === 0) messages.push(`Newton's method failed from the given start; the operating point was reached by continuation`)
    }
    if (it < 0) return
    const residual = R.eval(x, r)
    if (!Number.isFinite(residual)) return
    if (found.some((f) => same(f.x, x, scale))) return
    found.push({ x, residual, iterations: it, method, stable: isStable(model, R, x) })
  })
  if (found.length === 0) {
    messages.push(`no operating point found from ${starts.length} starts (Newton with the exact Jacobian, then continuation): the equations may have no steady state for these inputs${model.states.some((s) => s.lower !== null || s.upper !== null) ? ' within the states\' bounds' : ''}, or a state integrates without limit (a singular Jacobian)`)
    return { status: 'none', solutions: [], starts: starts.length, messages }
  }
  const dist = (x: Float64Array) => {
    let s = 0
    for (let i = 0; i < n; i++) s += ((x[i] - guess[i]) / scale[i]) ** 2
    return s
  }
  found.sort((a, b) => dist(a.x) - dist(b.x))
  if (found.length > 1) messages.push(`${found.length} distinct operating points found for these inputs; the one nearest the start is used`)
  return { status: found.length > 1 ? 'several' : 'unique', solutions: found, starts: starts.length, messages }
}
