/**
 * stiff: the linearly implicit Rosenbrock-W method ROS34PW2 (4 stages, order 3, embedded order 2,
 * L-stable and stiffly accurate), with the exact ∂f/∂x and ∂f/∂t of the compiled sheet.
 *
 * Reference: J. Rang, L. Angermann, "New Rosenbrock W-methods of order 3 for partial
 * differential algebraic equations of index 1", BIT Numerical Mathematics 45 (2005) 761–787,
 * Table for ROS34PW2 (coefficients α_ij, γ_ij, b_i, b̂_i below). The stage equations are those of
 * Hairer & Wanner, Solving Ordinary Differential Equations II, 2nd ed. 1996, Sec. IV.7, eq. (7.4)
 * (non-autonomous form with γ_i h² f_t), implemented in the transformed variables u_i = Σ_j γ_ij k_j
 * of eq. (7.3') so that no Jacobian-vector product is needed.
 *
 * Why a W-method: forward sensitivities are integrated with the states as one augmented system
 * z = [x, ∂x/∂θ_1, …]. Its exact Jacobian has the blocks ∂(J·s)/∂x (second derivatives of f), which
 * the compiled sheet does not provide. A W-method keeps its order with any matrix in place of the
 * Jacobian (Rang & Angermann 2005, Sec. 2; Hairer & Wanner II, Sec. IV.7 "W-methods"), so we use the
 * block-diagonal diag(J, J, …, J) and ∂f/∂t of the state block only: one LU of the nx×nx matrix
 * I/(hγ) − J per step serves every sensitivity. The order 3 of the state and sensitivity results is
 * checked in tests/engine/stiff.test.ts on a problem with a closed-form solution, and the
 * coefficients against the W-method order conditions (Hairer & Wanner II, Sec. IV.7).
 *
 * Dense output: cubic Hermite interpolation from the step's end values and derivatives (order 3,
 * the method's order); the end derivative is the next step's first stage, so it costs nothing extra.
 */
import { checkLimits, checkStepSize, clipStep, errNorm, firstNonFinite, initialStep, nextStep, NonFiniteSeen, stepEnd, throwNonFinite } from './control'
import { luFactor, luSolve } from './lu'
import { newCounters, resetCounters, type OdeSolver, type OdeSystem, type SolverLimits, type StepObserver, type Tolerances } from './types'

/** ROS34PW2, Rang & Angermann (2005): γ, α_ij (strictly lower), γ_ij (strictly lower), b, b̂. */
export const ROS34PW2 = {
  gamma: 4.3586652150845900e-01,
  alpha: [
    [],
    [8.7173304301691801e-01],
    [8.4457060015369423e-01, -1.1299064236484185e-01],
    [0, 0, 1],
  ],
  gammaij: [
    [],
    [-8.7173304301691801e-01],
    [-9.0338057013044082e-01, 5.4180672388095326e-02],
    [2.4212380706095346e-01, -1.2232505839045147e+00, 5.4526025533510214e-01],
  ],
  b: [2.4212380706095346e-01, -1.2232505839045147e+00, 1.5452602553351020e+00, 4.3586652150845900e-01],
  bhat: [3.7810903145819369e-01, -9.6042292212423178e-02, 5.0000000000000000e-01, 2.1793326075422950e-01],
  order: 3,
} as const

/** The transformed coefficients of Hairer & Wanner II, (7.3'): a = αΓ⁻¹, c = −Γ⁻¹ (off-diagonal), m = bΓ⁻¹. */
export function transformRosenbrock(tab: { gamma: number; alpha: readonly (readonly number[])[]; gammaij: readonly (readonly number[])[]; b: readonly number[]; bhat: readonly number[] }) {
  const s = tab.b.length
  const G: number[][] = []
  for (let i = 0; i < s; i++) {
    G.push(Array.from({ length: s }, (_, j) => (j < i ? tab.gammaij[i][j] : j === i ? tab.gamma : 0)))
  }
  // inverse of the lower-triangular Γ, column by column
  const Gi: number[][] = Array.from({ length: s }, () => new Array<number>(s).fill(0))
  for (let c = 0; c < s; c++) {
    for (let i = 0; i < s; i++) {
      let v = i === c ? 1 : 0
      for (let j = 0; j < i; j++) v -= G[i][j] * Gi[j][c]
      Gi[i][c] = v / G[i][i]
    }
  }
  const A: number[][] = Array.from({ length: s }, () => new Array<number>(s).fill(0))
  const C: number[][] = Array.from({ length: s }, () => new Array<number>(s).fill(0))
  for (let i = 0; i < s; i++) {
    for (let j = 0; j < i; j++) {
      let v = 0
      for (let k = 0; k < i; k++) v += (tab.alpha[i][k] ?? 0) * Gi[k][j]
      A[i][j] = v
      C[i][j] = -Gi[i][j]
    }
  }
  const m = new Array<number>(s).fill(0)
  const mh = new Array<number>(s).fill(0)
  for (let j = 0; j < s; j++) {
    for (let i = 0; i < s; i++) {
      m[j] += tab.b[i] * Gi[i][j]
      mh[j] += tab.bhat[i] * Gi[i][j]
    }
  }
  const alphaSum = tab.alpha.map((row) => row.reduce((a, v) => a + v, 0))
  const gammaSum = G.map((row) => row.reduce((a, v) => a + v, 0))
  return { s, gamma: tab.gamma, A, C, m, me: m.map((v, j) => v - mh[j]), alphaSum, gammaSum }
}

const T = transformRosenbrock(ROS34PW2)
const SAFE = 0.9
const FAC_MIN = 0.2
const FAC_MAX = 6

export class Rosenbrock implements OdeSolver {
  readonly name = 'stiff'
  readonly counters = newCounters()
  t = 0
  h = 0
  z: Float64Array = new Float64Array(0)
  private sys!: OdeSystem
  private tol!: Tolerances
  private limits!: SolverLimits
  private n = 0
  private nb = 0
  private u: Float64Array[] = []
  private f0: Float64Array = new Float64Array(0)
  private f1: Float64Array = new Float64Array(0)
  private fOld: Float64Array = new Float64Array(0)
  private zOld: Float64Array = new Float64Array(0)
  private z1: Float64Array = new Float64Array(0)
  private ytmp: Float64Array = new Float64Array(0)
  private ft: Float64Array = new Float64Array(0)
  private J: Float64Array = new Float64Array(0)
  private W: Float64Array = new Float64Array(0)
  private piv = new Int32Array(0)
  private tOld = 0
  private hLast = 0
  private haveF0 = false
  private haveJ = false
  private lastRejected = false
  private readonly nonFinite = new NonFiniteSeen()

  private alloc(n: number, nb: number): void {
    if (this.n === n && this.nb === nb) return
    this.n = n
    this.nb = nb
    this.u = Array.from({ length: T.s }, () => new Float64Array(n))
    this.f0 = new Float64Array(n)
    this.f1 = new Float64Array(n)
    this.fOld = new Float64Array(n)
    this.zOld = new Float64Array(n)
    this.z = new Float64Array(n)
    this.z1 = new Float64Array(n)
    this.ytmp = new Float64Array(n)
    this.ft = new Float64Array(n)
    this.J = new Float64Array(nb * nb)
    this.W = new Float64Array(nb * nb)
    this.piv = new Int32Array(nb)
  }

  start(sys: OdeSystem, tol: Tolerances, limits: SolverLimits, t: number, z: Float64Array, h: number): void {
    this.attach(sys, tol, limits)
    this.restartAt(t, z, h)
  }

  /** continue from (t, z) keeping the counters (used when `auto` switches to this method) */
  restartAt(t: number, z: Float64Array, h: number): void {
    this.t = t
    this.tOld = t
    this.z.set(z.subarray(0, this.n))
    this.h = h
    this.hLast = 0
    this.haveF0 = false
    this.haveJ = false
    this.lastRejected = false
  }

  /** attach after `start` of another method: same system, tolerances and limits */
  attach(sys: OdeSystem, tol: Tolerances, limits: SolverLimits): void {
    this.alloc(sys.n, sys.nBlock)
    this.sys = sys
    this.tol = tol
    this.limits = limits
    resetCounters(this.counters)
  }

  setLimits(limits: SolverLimits): void {
    this.limits = limits
  }

  breakpoint(): void {
    this.haveF0 = false
    this.haveJ = false
  }

  step(tStop: number): void {
    const { sys, n, nb, u, counters, limits, ytmp, ft, J, W, piv } = this
    const s = T.s
    if (!this.haveF0) {
      sys.f(this.t, this.z, this.f0)
      counters.rhsEvals++
      const bad = firstNonFinite(this.f0, n)
      if (bad >= 0) throwNonFinite(limits, nb, bad, this.t, this.f0[bad])
      this.haveF0 = true
    }
    if (this.h === 0 && limits.fixedStep <= 0) {
      this.h = initialStep(sys, this.tol, this.t, this.z, this.f0, ytmp, this.z1, 3, Math.abs(tStop - this.t), counters)
    }
    const nBlocks = n / nb
    for (;;) {
      checkLimits(limits, counters, this.t)
      const t = this.t
      const z = this.z
      const hWanted = limits.fixedStep > 0 ? limits.fixedStep : this.h
      const h = clipStep(t, hWanted, tStop)
      const clipped = h < hWanted
      checkStepSize(t, h, this.nonFinite, limits, nb)
      if (!this.haveJ) {
        sys.jac(t, z, J, ft)
        counters.jacEvals++
        this.haveJ = true
      }
      const d = 1 / (h * T.gamma)
      for (let i = 0; i < nb * nb; i++) W[i] = -J[i]
      for (let i = 0; i < nb; i++) W[i * nb + i] += d
      counters.luDecomps++
      let ok = luFactor(W, nb, piv)
      if (ok) {
        for (let st = 0; st < s && ok; st++) {
          const ui = u[st]
          const Ai = T.A[st]
          const Ci = T.C[st]
          if (st === 0) {
            ui.set(this.f0)
          } else {
            for (let i = 0; i < n; i++) {
              let acc = z[i]
              for (let j = 0; j < st; j++) acc += Ai[j] * u[j][i]
              ytmp[i] = acc
            }
            sys.f(t + T.alphaSum[st] * h, ytmp, ui)
            counters.rhsEvals++
            const bad = firstNonFinite(ui, n)
            if (bad >= 0) {
              this.nonFinite.note(bad, t + T.alphaSum[st] * h, ui[bad])
              ok = false
              break
            }
            for (let i = 0; i < n; i++) {
              let acc = 0
              for (let j = 0; j < st; j++) acc += Ci[j] * u[j][i]
              ui[i] += acc / h
            }
          }
          const gh = T.gammaSum[st] * h
          for (let i = 0; i < n; i++) ui[i] += gh * ft[i]
          for (let b = 0; b < nBlocks; b++) luSolve(W, nb, piv, ui, b * nb)
        }
      }
      let err = Infinity
      if (ok) {
        const z1 = this.z1
        const ev = ytmp
        for (let i = 0; i < n; i++) {
          let acc = z[i]
          let e = 0
          for (let j = 0; j < s; j++) {
            acc += T.m[j] * u[j][i]
            e += T.me[j] * u[j][i]
          }
          z1[i] = acc
          ev[i] = e
        }
        err = limits.fixedStep > 0 ? 0 : errNorm(this.tol, nb, n, ev, z, z1)
        if (!Number.isFinite(err)) ok = false
      }
      if (ok && err <= 1) {
        // derivative at the new point: Hermite end slope and the next step's first stage
        sys.f(t + h, this.z1, this.f1)
        counters.rhsEvals++
        const bad = firstNonFinite(this.f1, n)
        if (bad >= 0) {
          this.nonFinite.note(bad, t + h, this.f1[bad])
          ok = false
        }
      }
      if (!ok) {
        counters.rejected++
        this.lastRejected = true
        this.h = 0.25 * h
        continue
      }
      let fac = err === 0 ? FAC_MAX : SAFE * Math.pow(err, -1 / (ROS34PW2.order))
      if (err <= 1) {
        fac = Math.min(FAC_MAX, Math.max(FAC_MIN, fac))
        const hNew = nextStep(h * fac, h, hWanted, clipped, this.lastRejected)
        this.lastRejected = false
        counters.steps++
        this.nonFinite.at = -1
        // shift: old ← current, current ← new
        this.zOld.set(z)
        this.fOld.set(this.f0)
        const tmpz = this.z
        this.z = this.z1
        this.z1 = tmpz
        const tmpf = this.f0
        this.f0 = this.f1
        this.f1 = tmpf
        this.tOld = t
        this.t = stepEnd(t, h, tStop, clipped)
        this.hLast = this.t - t
        this.haveJ = false
        this.h = hNew
        return
      }
      counters.rejected++
      this.lastRejected = true
      this.h = h * Math.max(FAC_MIN, fac)
    }
  }

  advance(tStop: number, obs: StepObserver | null): void {
    while (this.t < tStop) {
      this.step(tStop)
      if (obs !== null) obs(this.tOld, this.t)
    }
  }

  /** cubic Hermite on [tOld, t] from (zOld, fOld) and (z, f0) */
  dense(t: number, out: Float64Array): void {
    const n = this.n
    const h = this.hLast
    if (h === 0) {
      out.set(this.z.subarray(0, n))
      return
    }
    const th = (t - this.tOld) / h
    const th2 = th * th
    const th3 = th2 * th
    const h00 = 2 * th3 - 3 * th2 + 1
    const h10 = th3 - 2 * th2 + th
    const h01 = -2 * th3 + 3 * th2
    const h11 = th3 - th2
    const y0 = this.zOld
    const y1 = this.z
    const f0 = this.fOld
    const f1 = this.f0
    for (let i = 0; i < n; i++) out[i] = h00 * y0[i] + h * h10 * f0[i] + h01 * y1[i] + h * h11 * f1[i]
  }
}
