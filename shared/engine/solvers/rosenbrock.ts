/**
 * stiff: the Rosenbrock method RODAS4 (6 stages, order 4, embedded order 3, L-stable, stiffly
 * accurate), with the exact ∂f/∂x and ∂f/∂t of the compiled sheet and the method's own dense output
 * of order 3 built from the step's stages.
 *
 * References:
 * - Method and coefficients: E. Hairer, G. Wanner, Solving Ordinary Differential Equations II,
 *   2nd ed. 1996, Sec. VI.4 ("Rosenbrock methods" for index-1 problems, the method RODAS, Table
 *   of its coefficients) and their Fortran code RODAS (subroutine ROCOE, METH = 1): the transformed
 *   coefficients a_ij, c_ij, c_i (α_i), d_i (γ_i) below, copied digit for digit.
 * - Stage equations: Hairer & Wanner II, Sec. IV.7, eq. (7.4) in the transformed variables
 *   u_i = Σ_j γ_ij k_j of eq. (7.3'):
 *     (I/(hγ) − J) u_i = f(t + α_i h, y + Σ_j a_ij u_j) + Σ_j (c_ij/h) u_j + γ_i h f_t,
 *     y₁ = y + Σ_i m_i u_i.
 *   RODAS4 is stiffly accurate: the embedded solution is the argument of stage 6 (= y + Σ a_5j u_j
 *   + u_5) and y₁ = that + u_6, so the error estimate is u_6 itself (as in the RODAS code).
 * - Dense output (Hairer & Wanner II, Sec. IV.7 "Dense output" and the RODAS code, CONTRO/D21–D35):
 *     y(t + θh) = (1 − θ) y₀ + θ (y₁ + (1 − θ)(w₂ + θ w₃)),  w_k = Σ_{j≤5} d_kj u_j.
 * - Step-size control: the RODAS code: h_new = h / clamp(err^{1/4}/0.9, 1/6, 5) with Gustafsson's
 *   predictive controller (Hairer & Wanner II, Sec. IV.8, eq. (8.21)), taking the more cautious of
 *   the two; no growth right after a rejection.
 *
 * Sensitivities: the system z = [x, s_1, …] (system.ts) has the block lower-triangular Jacobian
 *   [[J, 0], [M_j, J]],   M_j = ∂(J s_j + ∂f/∂θ_j)/∂x,
 * and a Rosenbrock method of order 4 needs it exactly (it is not a W-method; Hairer & Wanner II,
 * Sec. IV.7). Each stage solves the state block first, u_x = W⁻¹ r_x, then the sensitivity blocks
 * u_j = W⁻¹ (r_j + M_j u_x), all of them in one pass over W's factors (lu.ts, luSolveBlocks), with
 * M_j taken at the step's start (sys.coupleAt once per step): one LU of the nx×nx matrix serves all
 * blocks (the simultaneous
 * treatment of the sensitivity system with the states' matrix, T. Maly & L. R. Petzold,
 * "Numerical methods and software for sensitivity analysis of differential-algebraic systems",
 * Appl. Numer. Math. 20 (1996) 57–79, their "simultaneous corrector"; cited from memory). M_j u_x
 * and the sensitivity blocks' ∂/∂t are exact: the sheet compiler's second directional derivative
 * d2f, generated also as d2fs for all sensitivities in one call (sys.couple; shared/sheet/coupling-codegen.ts).
 *
 * Error control of the sensitivities: with M_j exact, the sensitivity stages are the derivatives of
 * the state stages with respect to θ_j (differentiate (I/(hγ) − J(y)) u = r by θ: the extra term
 * (dJ/dθ_j)·u = f''[s_j, u] + ∂J/∂θ_j·u is M_j u), so s is the exact derivative of the computed x
 * for the steps taken ("internal numerical differentiation", H. G. Bock, "Numerical treatment of
 * inverse problems in chemical reaction kinetics", Springer Ser. Chem. Phys. 18 (1981) 102–125;
 * cited from memory): what a fit needs is the gradient of what it computes. So by default the
 * error norm takes the states only — partial error control, the default of CVODES (errconS false;
 * Hindmarsh & Serban, CVODES guide, Sec. 2.6 and CVodeSetSensErrCon); `tol.stiffSensitivities`
 * puts the sensitivities in the norm too (full error control).
 */
import * as control from './control'
import * as lu from './lu'
import { OneStepSolver } from './one-step'

// Module-level references to the imported functions the step loop calls: under the CommonJS
// transform that runs the server and the benches (tsx), a call of an imported name reads a property
// getter each time, which V8 does not inline (measured: about a tenth of a Robertson run with
// three sensitivities).
const { errNorm, firstNonFinite, initialStep, throwNonFinite } = control
const { luFactor, luSolve, luSolveBlocks } = lu

/** RODAS4 in transformed form: Hairer & Wanner, RODAS code, ROCOE (METH = 1). */
export const RODAS4 = {
  stages: 6,
  gamma: 0.25,
  /** α_i: stage i is evaluated at t + α_i h */
  alpha: [0, 0.386, 0.21, 0.63, 1, 1],
  /** γ_i = Σ_j γ_ij: the f_t weight of stage i */
  gammaSum: [0.25, -0.1043, 0.1035, -0.3620000000000023e-1, 0, 0],
  /** a_ij (strictly lower): stage arguments y + Σ_j a_ij u_j */
  a: [
    [],
    [0.1544000000000000e+1],
    [0.9466785280815826, 0.2557011698983284],
    [0.3314825187068521e+1, 0.2896124015972201e+1, 0.9986419139977817],
    [0.1221224509226641e+1, 0.6019134481288629e+1, 0.1253708332932087e+2, -0.6878860361058950],
    [0.1221224509226641e+1, 0.6019134481288629e+1, 0.1253708332932087e+2, -0.6878860361058950, 1],
  ],
  /** c_ij (strictly lower): the Σ_j (c_ij/h) u_j terms */
  c: [
    [],
    [-0.5668800000000000e+1],
    [-0.2430093356833875e+1, -0.2063599157091915],
    [-0.1073529058151375, -0.9594562251023355e+1, -0.2047028614809616e+2],
    [0.7496443313967647e+1, -0.1024680431464352e+2, -0.3399990352819905e+2, 0.1170890893206160e+2],
    [0.8083246795921522e+1, -0.7981132988064893e+1, -0.3152159432874371e+2, 0.1631930543123136e+2, -0.6058818238834054e+1],
  ],
  /** y₁ = y₀ + Σ m_i u_i (stiffly accurate: the last row of a, plus u_6; the step uses that form) */
  m: [0.1221224509226641e+1, 0.6019134481288629e+1, 0.1253708332932087e+2, -0.6878860361058950, 1, 1],
  /** y₁ − ŷ₁ = Σ e_i u_i = u_6 */
  e: [0, 0, 0, 0, 0, 1],
  /** dense output w₂, w₃ weights on u_1..u_5 (RODAS code D21–D25, D31–D35) */
  d2: [0.1012623508344586e+2, -0.7487995877610167e+1, -0.3480091861555747e+2, -0.7992771707568823e+1, 0.1025137723295662e+1],
  d3: [-0.6762803392801253, 0.6087714651680015e+1, 0.1643084320892478e+2, 0.2476722511418386e+2, -0.6594389125716872e+1],
  /** order of y₁ */
  order: 4,
  /** order of the embedded ŷ₁: the error estimate is O(h^{embeddedOrder+1}) */
  embeddedOrder: 3,
} as const

/** safety factor of the step-size controller (RODAS code, WORK(4)) */
const SAFETY = 0.9
/** h_new/h stays within [MIN_RATIO, MAX_RATIO] (RODAS code: 0.2 ≤ h_new/h ≤ 6) */
const MIN_RATIO = 0.2
const MAX_RATIO = 6
/** the predictive controller's memory of the error keeps it from dividing by ~0 (RODAS code) */
const PRED_ERR_FLOOR = 1e-2
/** a step whose stages are not finite or whose matrix is singular is retried with h × this */
const RETRY_SHRINK = 0.25
/** x^{1/(p̂+1)} for the embedded order p̂ = 3: two square roots cost less than Math.pow */
const root4 = (x: number): number => Math.sqrt(Math.sqrt(x))

export class Rosenbrock extends OneStepSolver {
  readonly name = 'stiff'
  /** size of the leading state block the Jacobian covers (the rest are sensitivities, coupled through sys.couple) */
  private nb = 0
  /** the stage vectors u₁…u_s of the transformed method (Hairer & Wanner II, Sec. IV.7, eq. (7.3')) */
  private u: Float64Array[] = []
  /** the last accepted step's stages (swapped with u on acceptance), read by the dense output */
  private uAcc: Float64Array[] = []
  /** Σ_j (c_ij/h) u_j + γ_i h f_t of the stage being formed */
  private csum: Float64Array = new Float64Array(0)
  /** f at the start and at the end of the step */
  private f0: Float64Array = new Float64Array(0)
  private f1: Float64Array = new Float64Array(0)
  /** the step's result y₁ (swapped with z on acceptance) */
  private z1: Float64Array = new Float64Array(0)
  private ytmp: Float64Array = new Float64Array(0)
  /** nb zeros: the direction of a pure time derivative in sys.couple */
  private zeroX: Float64Array = new Float64Array(0)
  /** ∂f/∂t at the step's start */
  private ft: Float64Array = new Float64Array(0)
  /** Jacobian ∂f/∂z of the state block, the iteration matrix W = I/(hγ) − J, and W's LU pivots */
  private J: Float64Array = new Float64Array(0)
  private W: Float64Array = new Float64Array(0)
  private piv = new Int32Array(0)
  /** dense output of the last accepted step: y₀, w₂, w₃ (y₁ is z); w₂, w₃ formed at its first use */
  private zOld: Float64Array = new Float64Array(0)
  private w2: Float64Array = new Float64Array(0)
  private w3: Float64Array = new Float64Array(0)
  private haveW = false
  private haveF0 = false
  private haveJ = false
  /** Gustafsson's predictive controller: the last accepted step and its error */
  private hAcc = 0
  private errAcc = 0

  protected alloc(n: number, nb: number): void {
    if (this.n === n && this.nb === nb) return
    this.n = n
    this.nb = nb
    this.u = Array.from({ length: RODAS4.stages }, () => new Float64Array(n))
    this.uAcc = Array.from({ length: RODAS4.stages }, () => new Float64Array(n))
    this.csum = new Float64Array(n)
    this.f0 = new Float64Array(n)
    this.f1 = new Float64Array(n)
    this.zOld = new Float64Array(n)
    this.z = new Float64Array(n)
    this.z1 = new Float64Array(n)
    this.ytmp = new Float64Array(n)
    this.zeroX = new Float64Array(nb)
    this.ft = new Float64Array(n)
    this.w2 = new Float64Array(n)
    this.w3 = new Float64Array(n)
    this.J = new Float64Array(nb * nb)
    this.W = new Float64Array(nb * nb)
    this.piv = new Int32Array(nb)
  }

  protected reset(): void {
    this.haveF0 = false
    this.haveJ = false
    this.hAcc = 0
  }

  breakpoint(): void {
    this.haveF0 = false
    this.haveJ = false
  }

  /** components in the error norm: the states, and the sensitivities only when asked (full error control) */
  private normSize(): number {
    return this.tol.stiffSensitivities === true ? this.n : this.nb
  }

  /** f(t, z) into f0, once per accepted step (it is stage 1 and the base of the differences) */
  private evalF0(): void {
    const { sys, n, counters, limits } = this
    sys.f(this.t, this.z, this.f0)
    counters.rhsEvals++
    const bad = firstNonFinite(this.f0, n)
    if (bad >= 0) throwNonFinite(limits, this.nb, bad, this.t, this.f0[bad])
    this.haveF0 = true
  }

  /** J and f_t at the step's start; with sensitivities also their blocks' exact ∂/∂t */
  private evalJacobian(t: number, z: Float64Array): void {
    const { sys, n, nb, ft, counters } = this
    sys.jac(t, z, this.J, ft)
    counters.jacEvals++
    if (n > nb) {
      sys.coupleAt(t, z)
      ft.fill(0, nb, n)
      sys.couple(this.zeroX, 1, ft)
    }
    this.haveJ = true
  }

  step(tStop: number): void {
    const { sys, n, nb, u, counters, limits, ytmp, csum, ft, J, W, piv } = this
    const s = RODAS4.stages
    const coupled = n > nb
    const nBlocks = n / nb
    if (!this.haveF0) this.evalF0()
    if (this.h === 0 && limits.fixedStep <= 0) {
      this.h = initialStep(sys, this.tol, this.t, this.z, this.f0, ytmp, this.z1, RODAS4.order, Math.abs(tStop - this.t), counters, this.normSize())
    }
    for (;;) {
      const h = this.attempt(tStop)
      const t = this.t
      const z = this.z
      if (!this.haveJ) this.evalJacobian(t, z)
      const d = 1 / (h * RODAS4.gamma)
      for (let i = 0; i < nb * nb; i++) W[i] = -J[i]
      for (let i = 0; i < nb; i++) W[i * nb + i] += d
      counters.luDecomps++
      let ok = luFactor(W, nb, piv)
      for (let st = 0; st < s && ok; st++) {
        const ui = u[st]
        const gh = RODAS4.gammaSum[st] * h
        if (st === 0) {
          const f0 = this.f0
          for (let i = 0; i < n; i++) ui[i] = f0[i] + gh * ft[i]
        } else {
          // one pass over the components: the stage argument z + Σ_j a_ij u_j into ytmp and
          // γ_i h f_t + Σ_j (c_ij/h) u_j into csum, the sums kept in registers (the earlier stages are
          // read once each; the unused ones are not read: after a failed attempt they may hold NaN)
          const a: readonly number[] = RODAS4.a[st]
          const c: readonly number[] = RODAS4.c[st]
          const a0 = a[0], c0 = c[0] / h, u0 = u[0]
          const a1 = st > 1 ? a[1] : 0, c1 = st > 1 ? c[1] / h : 0, u1 = u[1]
          const a2 = st > 2 ? a[2] : 0, c2 = st > 2 ? c[2] / h : 0, u2 = u[2]
          const a3 = st > 3 ? a[3] : 0, c3 = st > 3 ? c[3] / h : 0, u3 = u[3]
          const a4 = st > 4 ? a[4] : 0, c4 = st > 4 ? c[4] / h : 0, u4 = u[4]
          for (let i = 0; i < n; i++) {
            let v = u0[i]
            let y = z[i] + a0 * v
            let cs = gh * ft[i] + c0 * v
            if (st > 1) {
              v = u1[i]
              y += a1 * v
              cs += c1 * v
              if (st > 2) {
                v = u2[i]
                y += a2 * v
                cs += c2 * v
                if (st > 3) {
                  v = u3[i]
                  y += a3 * v
                  cs += c3 * v
                  if (st > 4) {
                    v = u4[i]
                    y += a4 * v
                    cs += c4 * v
                  }
                }
              }
            }
            ytmp[i] = y
            csum[i] = cs
          }
          const ts = t + RODAS4.alpha[st] * h
          sys.f(ts, ytmp, ui)
          counters.rhsEvals++
          // csum is finite (earlier stages were), so a non-finite f stays non-finite in the sum
          let bad = -1
          for (let i = 0; i < n; i++) {
            const v = ui[i] + csum[i]
            ui[i] = v
            if (v - v !== 0 && bad < 0) bad = i
          }
          if (bad >= 0) {
            this.nonFinite.note(bad, ts, ui[bad])
            ok = false
            break
          }
        }
        luSolve(W, nb, piv, ui, 0)
        if (coupled) {
          // r_j += M_j·u_x (u_x, the state block of ui, is solved already), then all sensitivity
          // blocks through W's factors in one pass
          sys.couple(ui, 0, ui)
          luSolveBlocks(W, nb, piv, ui, nb, nBlocks - 1)
        }
      }
      let err = Infinity
      if (ok) {
        // stiffly accurate: y₁ = (stage 6's argument, still in ytmp) + u₆, i.e. y₀ + Σ m_i u_i
        const z1 = this.z1
        const u6 = u[s - 1]
        for (let i = 0; i < n; i++) z1[i] = ytmp[i] + u6[i]
        err = limits.fixedStep > 0 ? 0 : errNorm(this.tol, nb, this.normSize(), u6, z, z1)
        if (!Number.isFinite(err) || firstNonFinite(z1, n) >= 0) ok = false
      }
      if (!ok) {
        this.reject(RETRY_SHRINK * h)
        continue
      }
      // h_new = h / fac, fac = err^{1/(p̂+1)} / SAFETY within [1/MAX_RATIO, 1/MIN_RATIO]
      let fac = Math.max(1 / MAX_RATIO, Math.min(1 / MIN_RATIO, root4(err) / SAFETY))
      if (err <= 1) {
        if (this.hAcc > 0) {
          const gus = (this.hAcc / h) * root4((err * err) / this.errAcc) / SAFETY
          fac = Math.max(fac, Math.max(1 / MAX_RATIO, Math.min(1 / MIN_RATIO, gus)))
        }
        this.hAcc = h
        this.errAcc = Math.max(PRED_ERR_FLOOR, err)
        // the derivative at the new point: the next step's first stage; a non-finite one rejects
        sys.f(t + h, this.z1, this.f1)
        counters.rhsEvals++
        const bad = firstNonFinite(this.f1, n)
        if (bad < 0) {
          this.accept(t, h, tStop, h / fac)
          return
        }
        this.nonFinite.note(bad, t + h, this.f1[bad])
        this.reject(RETRY_SHRINK * h)
        continue
      }
      this.reject(h / fac)
    }
  }

  /** shift to the new point (the next step tries hNew) and keep the step's stages for the dense output of [t, t + h] */
  private accept(t: number, h: number, tStop: number, hNew: number): void {
    const u = this.u
    this.u = this.uAcc
    this.uAcc = u
    this.haveW = false
    const old = this.zOld
    this.zOld = this.z
    this.z = this.z1
    this.z1 = old
    const f = this.f0
    this.f0 = this.f1
    this.f1 = f
    this.moveOn(t, h, tStop, hNew)
    this.haveJ = false
  }

  /** w₂, w₃ of the last accepted step from its stages (formed once, at the first dense output in it) */
  private formW(): void {
    const { n, uAcc, w2, w3 } = this
    const { d2, d3 } = RODAS4
    for (let i = 0; i < n; i++) {
      w2[i] = 0
      w3[i] = 0
    }
    for (let j = 0; j < 5; j++) {
      const uj = uAcc[j]
      const a = d2[j]
      const b = d3[j]
      for (let i = 0; i < n; i++) {
        w2[i] += a * uj[i]
        w3[i] += b * uj[i]
      }
    }
    this.haveW = true
  }

  /** RODAS continuous extension (order 3) on [tOld, t] */
  dense(t: number, out: Float64Array): void {
    if (this.denseAtStart(out)) return
    const n = this.n
    const h = this.hLast
    if (!this.haveW) this.formW()
    const th = (t - this.tOld) / h
    const th1 = 1 - th
    const y0 = this.zOld
    const y1 = this.z
    const w2 = this.w2
    const w3 = this.w3
    for (let i = 0; i < n; i++) out[i] = th1 * y0[i] + th * (y1[i] + th1 * (w2[i] + th * w3[i]))
  }
}
