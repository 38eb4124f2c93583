/**
 * Pieces shared by the one-step methods: the weighted RMS error norm, the starting step size,
 * checks of limits and non-finite values.
 */
import {
  AbortedError,
  NonFiniteDerivativeError,
  StepLimitError,
  StepSizeTooSmallError,
  TimeBudgetError,
} from '../errors'
import { now, type OdeSystem, type SolverCounters, type SolverLimits, type Tolerances } from './types'

/**
 * Weighted RMS norm of e, each component scaled by atol + rtol·max(|a|, |b|) of its state
 * (Hairer, Nørsett & Wanner, Solving ODEs I, 2nd ed. 1993, Sec. II.4, eq. (4.11)).
 */
export function errNorm(tol: Tolerances, nBlock: number, n: number, e: Float64Array, a: Float64Array, b: Float64Array): number {
  const { rtol, atol, weight } = tol
  let s = 0
  let cnt = 0
  for (let k = 0; k < n; k++) {
    const w = weight[k]
    if (w === 0) continue
    const i = k % nBlock
    // a sensitivity (k ≥ nBlock) is measured against its state's size or its own, whichever is larger
    const size = k < nBlock ? Math.max(Math.abs(a[i]), Math.abs(b[i])) : Math.max(Math.abs(a[i]), Math.abs(b[i]), w * Math.abs(a[k]), w * Math.abs(b[k]))
    const sc = atol[i] + rtol[i] * size
    const r = (e[k] * w) / sc
    s += r * r
    cnt++
  }
  return cnt === 0 ? 0 : Math.sqrt(s / cnt)
}

/** Index of the first non-finite entry of v[0..n), or -1. */
export function firstNonFinite(v: Float64Array, n: number): number {
  for (let i = 0; i < n; i++) {
    const x = v[i]
    if (x - x !== 0) return i
  }
  return -1
}

export function throwNonFinite(limits: SolverLimits, nBlock: number, idx: number, t: number, v: number): never {
  const i = idx % nBlock
  const b = Math.floor(idx / nBlock)
  const name = limits.stateNames[i] ?? `x${i}`
  throw new NonFiniteDerivativeError(b === 0 ? name : `${name} (sensitivity ${b})`, t, v)
}

/** Throws when the step count, time budget or abort signal says stop. */
export function checkLimits(limits: SolverLimits, c: SolverCounters, t: number): void {
  if (c.steps + c.rejected >= limits.maxSteps) throw new StepLimitError(limits.maxSteps, t)
  if (limits.signal !== null && limits.signal.aborted) throw new AbortedError(t)
  if (limits.deadline !== Infinity && ((c.steps + c.rejected) & 15) === 0 && now() > limits.deadline) {
    throw new TimeBudgetError(limits.budgetMs, t)
  }
}

/**
 * The last non-finite derivative met in a rejected step (`at` = component index, -1: none since the
 * last accepted step). When shrinking the step does not get past it, it is reported rather than
 * "step size too small".
 */
export class NonFiniteSeen {
  at = -1
  t = 0
  v = 0
  note(at: number, t: number, v: number): void {
    this.at = at
    this.t = t
    this.v = v
  }
}

/** Throws when h is too small to change t: the non-finite derivative that forced it, if any. */
export function checkStepSize(t: number, h: number, seen: NonFiniteSeen, limits: SolverLimits, nBlock: number): void {
  if (Math.abs(h) <= 16 * Number.EPSILON * Math.max(1, Math.abs(t))) {
    if (seen.at >= 0) throwNonFinite(limits, nBlock, seen.at, seen.t, seen.v)
    throw new StepSizeTooSmallError(t, h)
  }
}

/** The step to take from t: hWanted, or exactly what is left to tStop when hWanted comes within 1 % of it. */
export function clipStep(t: number, hWanted: number, tStop: number): number {
  return t + 1.01 * hWanted >= tStop ? tStop - t : hWanted
}

/** The end of an accepted step [t, t + h]: exactly tStop when the step was aimed at it. */
export function stepEnd(t: number, h: number, tStop: number, clipped: boolean): number {
  return clipped || t + h === tStop ? tStop : t + h
}

/**
 * The step size to try after an accepted step h that the controller would follow by hNew: no growth
 * right after a rejection; a step shortened to land on tStop does not shrink the next one below hWanted.
 */
export function nextStep(hNew: number, h: number, hWanted: number, clipped: boolean, afterReject: boolean): number {
  const hn = afterReject ? Math.min(hNew, h) : hNew
  return clipped ? Math.max(hn, hWanted) : hn
}

/**
 * Starting step size (Hairer, Nørsett & Wanner, Solving ODEs I, Sec. II.4, "Starting Step Size",
 * steps a–f; the same as HINIT in their dopri5 code). f0 = f(t, z) is given; y1, f1 are scratch;
 * the norms take the first nNorm components (the method's error norm's).
 */
export function initialStep(
  sys: OdeSystem, tol: Tolerances, t: number, z: Float64Array, f0: Float64Array,
  y1: Float64Array, f1: Float64Array, order: number, hmax: number, c: SolverCounters, nNorm = sys.n,
): number {
  const n = sys.n
  const d0 = errNorm(tol, sys.nBlock, nNorm, z, z, z)
  const d1 = errNorm(tol, sys.nBlock, nNorm, f0, z, z)
  let h0 = d0 < 1e-5 || d1 < 1e-5 ? 1e-6 : 0.01 * (d0 / d1)
  h0 = Math.min(h0, hmax)
  for (let i = 0; i < n; i++) y1[i] = z[i] + h0 * f0[i]
  sys.f(t + h0, y1, f1)
  c.rhsEvals++
  for (let i = 0; i < n; i++) f1[i] = (f1[i] - f0[i]) / h0
  const d2 = errNorm(tol, sys.nBlock, nNorm, f1, z, z)
  const dm = Math.max(d1, d2)
  const h1 = dm <= 1e-15 || !Number.isFinite(dm) ? Math.max(1e-6, h0 * 1e-3) : Math.pow(0.01 / dm, 1 / (order + 1))
  return Math.min(100 * h0, h1, hmax)
}
