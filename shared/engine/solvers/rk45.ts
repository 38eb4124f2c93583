/**
 * rk45: the explicit Runge–Kutta pair of Dormand and Prince, order 5 with an embedded order-4
 * error estimate, FSAL, and its continuous extension of order 4 for dense output.
 *
 * References:
 * - J. R. Dormand, P. J. Prince, "A family of embedded Runge-Kutta formulae", J. Comput. Appl. Math.
 *   6 (1980) 19–26, Table 2 (RK5(4)7M): the coefficients below.
 * - E. Hairer, S. P. Nørsett, G. Wanner, Solving Ordinary Differential Equations I, 2nd ed. 1993:
 *   Sec. II.5, Table 5.2 (the same tableau); Sec. II.6, eq. (6.12) and the dopri5 code (CONTD5) for the
 *   dense output coefficients d_i (after Shampine 1986); Sec. II.4 for step-size control with safety
 *   factor 0.9, growth limit 10 and shrink limit 0.2, and the PI stabilisation β = 0.04 of dopri5
 *   (Sec. IV.2 of Vol. II); Sec. II.10 (dopri5 "stiffness detection") for the stiffness test.
 */
import { errNorm, firstNonFinite, initialStep, throwNonFinite } from './control'
import { OneStepSolver } from './one-step'

/** Dormand–Prince 5(4) tableau, Dormand & Prince (1980) Table 2. Rows of A are stages 2..7. */
export const DP54 = {
  c: [0, 1 / 5, 3 / 10, 4 / 5, 8 / 9, 1, 1],
  a: [
    [],
    [1 / 5],
    [3 / 40, 9 / 40],
    [44 / 45, -56 / 15, 32 / 9],
    [19372 / 6561, -25360 / 2187, 64448 / 6561, -212 / 729],
    [9017 / 3168, -355 / 33, 46732 / 5247, 49 / 176, -5103 / 18656],
    [35 / 384, 0, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84],
  ],
  /** weights of the order-5 solution (= the last row of a: FSAL) */
  b: [35 / 384, 0, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84, 0],
  /** weights of the embedded order-4 solution */
  bhat: [5179 / 57600, 0, 7571 / 16695, 393 / 640, -92097 / 339200, 187 / 2100, 1 / 40],
  /** error weights b − b̂ */
  e: [71 / 57600, 0, -71 / 16695, 71 / 1920, -17253 / 339200, 22 / 525, -1 / 40],
  /** order of the solution carried on */
  order: 5,
  /** order of the embedded solution: the error estimate is O(h^{embeddedOrder+1}) */
  embeddedOrder: 4,
  /** dense output, Hairer–Nørsett–Wanner I, dopri5 (CONTD5) */
  d: [-12715105075 / 11282082432, 0, 87487479700 / 32700410799, -10690763975 / 1880347072,
    701980252875 / 199316789632, -1453857185 / 822651844, 69997945 / 29380423],
} as const

/** safety factor of the step-size controller (dopri5's SAFE) */
const SAFETY = 0.9
const FAC_MIN = 0.2 // shrink limit
const FAC_MAX = 10 // growth limit
/** weight of the previous error in the PI step-size controller (dopri5's BETA; Hairer et al. I, Sec. IV.2) */
const BETA = 0.04
/** exponent of err in the PI controller: 1/(p̂+1) − 0.75β (dopri5's EXPO1) */
const ERR_EXPONENT = 1 / (DP54.embeddedOrder + 1) - BETA * 0.75
/** DP5's stability region reaches about 3.3 on the negative real axis (Hairer et al. I, Sec. II.10) */
export const DP5_STIFF_BOUND = 3.25
/** dopri5's stiffness test: STIFF_RUN steps above the bound, CALM_RESET calmer ones in a row reset */
const STIFF_RUN = 15
const CALM_RESET = 6
/**
 * stability-limited test: h·ρ above this fraction of the bound on STABLE_HITS of STABLE_WINDOW steps,
 * at rtol ≥ STABLE_RTOL; below it the fraction shrinks like rtol^{1/5} (see `stiffnessTest`)
 */
const STABILITY_LIMITED = 0.6
const STABLE_RTOL = 1e-6
const STABLE_WINDOW = 30
const STABLE_HITS = 25
const WINDOW_MASK = (1 << STABLE_WINDOW) - 1

function popcount(v: number): number {
  let c = 0
  for (let x = v; x !== 0; x &= x - 1) c++
  return c
}

export class Rk45 extends OneStepSolver {
  readonly name = 'rk45'
  /** set when the stiffness test of Sec. II.10 fired */
  stiff = false
  /** the seven stage derivatives k₁…k₇ */
  private k: Float64Array[] = []
  /** the step's 5th-order result y₁ */
  private y1: Float64Array = new Float64Array(0)
  /** the stage-6 point, kept for the stiffness test's ρ ≈ ‖k₇ − k₆‖/‖y₁ − y_stage6‖ (dopri5's YSTI) */
  private yStage6: Float64Array = new Float64Array(0)
  private ytmp: Float64Array = new Float64Array(0)
  /** coefficients of the dense-output polynomial of the last step (dopri5's RCONT) */
  private denseCoef: Float64Array[] = []
  /** the previous accepted step's error, for the PI controller (dopri5's FACOLD) */
  private facOld = 1e-4
  private fsal = false
  /** steps above DP5_STIFF_BOUND since the last calm run, and calm steps in a row */
  private stiffCount = 0
  private calmCount = 0
  /** the last STABLE_WINDOW steps, one bit each: h·ρ above STABILITY_LIMITED·bound */
  private recent = 0
  private recentSteps = 0
  /** h·ρ above this counts as held by stability (test 2 of `stiffnessTest`) */
  private stableBound = STABILITY_LIMITED * DP5_STIFF_BOUND

  protected alloc(n: number): void {
    if (this.n === n && this.k.length === 7) return
    this.n = n
    this.k = Array.from({ length: 7 }, () => new Float64Array(n))
    this.denseCoef = Array.from({ length: 5 }, () => new Float64Array(n))
    this.z = new Float64Array(n)
    this.y1 = new Float64Array(n)
    this.yStage6 = new Float64Array(n)
    this.ytmp = new Float64Array(n)
  }

  protected reset(): void {
    this.facOld = 1e-4
    this.fsal = false
    this.stiff = false
    this.stiffCount = 0
    this.calmCount = 0
    this.recent = 0
    this.recentSteps = 0
    let rtol = Infinity
    for (let i = 0; i < this.tol.rtol.length; i++) rtol = Math.min(rtol, this.tol.rtol[i])
    this.stableBound = STABILITY_LIMITED * DP5_STIFF_BOUND * Math.min(1, Math.pow(rtol / STABLE_RTOL, 1 / (DP54.order)))
  }

  breakpoint(): void {
    this.fsal = false
  }

  private evalK1(): void {
    const { sys, n } = this
    const k1 = this.k[0]
    sys.f(this.t, this.z, k1)
    this.counters.rhsEvals++
    const bad = firstNonFinite(k1, n)
    if (bad >= 0) throwNonFinite(this.limits, sys.nBlock, bad, this.t, k1[bad])
    this.fsal = true
  }

  step(tStop: number): void {
    const { sys, n, k, ytmp, y1, yStage6, counters, limits } = this
    const A = DP54.a
    const C = DP54.c
    const E = DP54.e
    if (!this.fsal) this.evalK1()
    if (this.h === 0 && limits.fixedStep <= 0) {
      this.h = initialStep(sys, this.tol, this.t, this.z, k[0], ytmp, k[1], DP54.order, Math.abs(tStop - this.t), counters)
    }
    for (;;) {
      const h = this.attempt(tStop)
      const t = this.t
      const z = this.z
      // stages 2..7
      let bad = -1
      for (let s = 1; s < 7; s++) {
        const a = A[s]
        const dst = s === 5 ? yStage6 : s === 6 ? y1 : ytmp
        for (let i = 0; i < n; i++) {
          let acc = 0
          for (let j = 0; j < s; j++) acc += a[j] * k[j][i]
          dst[i] = z[i] + h * acc
        }
        const ks = k[s]
        sys.f(s === 6 ? t + h : t + C[s] * h, dst, ks)
        counters.rhsEvals++
        bad = firstNonFinite(ks, n)
        if (bad >= 0) {
          this.nonFinite.note(bad, t + C[s] * h, ks[bad])
          break
        }
      }
      if (bad >= 0) {
        this.reject(0.25 * h)
        continue
      }
      // error estimate
      const errv = ytmp
      for (let i = 0; i < n; i++) {
        errv[i] = h * (E[0] * k[0][i] + E[2] * k[2][i] + E[3] * k[3][i] + E[4] * k[4][i] + E[5] * k[5][i] + E[6] * k[6][i])
      }
      const err = limits.fixedStep > 0 ? 0 : errNorm(this.tol, sys.nBlock, n, errv, z, y1)
      const errPow = Math.pow(err, ERR_EXPONENT) // err^(1/5 − 0.75β), dopri5's FAC11
      if (err <= 1 || limits.fixedStep > 0) {
        let fac = errPow / Math.pow(this.facOld, BETA)
        fac = Math.max(1 / FAC_MAX, Math.min(1 / FAC_MIN, fac / SAFETY))
        const hNew = h / fac
        this.facOld = Math.max(err, 1e-4)
        this.stiffnessTest(h)
        // dense output coefficients (CONTD5)
        const D = DP54.d
        const r = this.denseCoef
        const r1 = r[0], r2 = r[1], r3 = r[2], r4 = r[3], r5 = r[4]
        for (let i = 0; i < n; i++) {
          const y0 = z[i]
          const yd = y1[i] - y0
          const bspl = h * k[0][i] - yd
          r1[i] = y0
          r2[i] = yd
          r3[i] = bspl
          r4[i] = yd - h * k[6][i] - bspl
          r5[i] = h * (D[0] * k[0][i] + D[2] * k[2][i] + D[3] * k[3][i] + D[4] * k[4][i] + D[5] * k[5][i] + D[6] * k[6][i])
        }
        // accept: FSAL
        this.z = y1
        this.y1 = z
        const k1 = k[0]
        k[0] = k[6]
        k[6] = k1
        this.moveOn(t, h, tStop, hNew)
        return
      }
      this.reject(h / Math.min(1 / FAC_MIN, errPow / SAFETY))
    }
  }

  /**
   * Two tests on h·ρ, ρ ≈ ‖f(y₁) − f(y₆)‖ / ‖y₁ − y₆‖ the dominant eigenvalue's size estimated from
   * the two last stages (Hairer, Nørsett & Wanner I, Sec. II.10, eq. (10.14)):
   * 1. their dopri5 test: h·ρ > DP5_STIFF_BOUND on STIFF_RUN accepted steps, CALM_RESET calmer
   *    steps in a row starting the count over;
   * 2. the step size is held by stability rather than accuracy: the controller then keeps h·ρ just
   *    inside the stability region, so h·ρ > STABILITY_LIMITED·DP5_STIFF_BOUND on STABLE_HITS of the
   *    last STABLE_WINDOW steps (the "step size limited by stability" diagnosis of
   *    L. F. Shampine, "Stiffness and nonstiff differential equation solvers, II: Detecting
   *    stiffness with Runge-Kutta methods", ACM TOMS 3 (1977) 44–53; cited from memory). With tight absolute
   *    tolerances the controller settles at h·ρ ≈ 2.5–3.2, below test 1's bound, for thousands of
   *    steps; accuracy-limited steps of non-stiff problems stay far below (measured on the
   *    benchmark problems at rtol 1e-3 … 1e-10: at most 10 of 30 steps above 2).
   *    An accuracy-limited step of an order-5 method scales like rtol^{1/5} (local error ∝ h⁵;
   *    Hairer, Nørsett & Wanner I, Sec. II.4, the step-size formula), so h·ρ of a non-stiff problem
   *    shrinks with it while a stability-held h·ρ does not (Robertson at rtol 1e-10, atol 1e-14:
   *    h·ρ ≈ 1.0–1.1 for thousands of steps). Below rtol 1e-6 the threshold is scaled by
   *    (rtol/1e-6)^{1/5}: measured on Arenstorf, Lotka–Volterra, the damped oscillator and
   *    exponential decay at rtol 1e-3 … 1e-12 (atol = rtol and rtol·1e-3), at most 6 of any 30 steps
   *    pass it; Robertson at rtol 1e-10 switches after 112 explicit steps instead of 2 701.
   */
  private stiffnessTest(h: number): void {
    const nb = this.sys.nBlock
    const k6 = this.k[5]
    const k7 = this.k[6]
    let num = 0
    let den = 0
    for (let i = 0; i < nb; i++) {
      const a = k7[i] - k6[i]
      const b = this.y1[i] - this.yStage6[i]
      num += a * a
      den += b * b
    }
    if (den === 0) return
    const hRho = Math.abs(h) * Math.sqrt(num / den)
    if (hRho > DP5_STIFF_BOUND) {
      this.calmCount = 0
      this.stiffCount++
      if (this.stiffCount >= STIFF_RUN) this.stiff = true
    } else {
      this.calmCount++
      if (this.calmCount >= CALM_RESET) this.stiffCount = 0
    }
    this.recent = ((this.recent << 1) | (hRho > this.stableBound ? 1 : 0)) & WINDOW_MASK
    this.recentSteps++
    if (this.recentSteps >= STABLE_WINDOW && popcount(this.recent) >= STABLE_HITS) this.stiff = true
  }

  dense(t: number, out: Float64Array): void {
    if (this.denseAtStart(out)) return
    const n = this.n
    const r = this.denseCoef
    const r1 = r[0], r2 = r[1], r3 = r[2], r4 = r[3], r5 = r[4]
    const th = (t - this.tOld) / this.hLast
    const th1 = 1 - th
    for (let i = 0; i < n; i++) out[i] = r1[i] + th * (r2[i] + th1 * (r3[i] + th * (r4[i] + th1 * r5[i])))
  }
}
