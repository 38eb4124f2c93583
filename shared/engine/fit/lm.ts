/**
 * Bounded Levenberg–Marquardt for ‖r(θ)‖² with the exact Jacobian.
 *
 * - Method: K. Levenberg, Quart. Appl. Math. 2 (1944) 164–168; D. W. Marquardt, J. SIAM 11 (1963) 431–441;
 *   column scaling D = diag(max over iterations of ‖J_j‖) as in J. J. Moré, "The Levenberg–Marquardt
 *   algorithm: implementation and theory", in G. A. Watson (ed.), Numerical Analysis, Springer (1978)
 *   105–116, eq. (6.3).
 * - Step: δ = −Σ_i σ_i/(σ_i² + λ)·(u_iᵀ r)·v_i from the SVD of the scaled Jacobian J·D⁻¹ = Q·(U S Vᵀ)
 *   (Householder QR, then one-sided Jacobi SVD of R; no normal equations, no explicit inverse of JᵀJ).
 * - Damping update: H. B. Nielsen, "Damping parameter in Marquardt's method", IMM-REP-1999-05, DTU, 1999,
 *   eq. (2.4): accepted step λ ← λ·max(1/3, 1 − (2ρ − 1)³), ν ← 2; rejected λ ← λ·ν, ν ← 2ν.
 * - Initial damping: ours, λ₀ = τ·σ_1² with τ = 1e-3 and σ_1 the largest singular value of the scaled
 *   Jacobian J·D⁻¹ (the largest eigenvalue of its JᵀJ). The sources take λ₀ = τ·max_i (JᵀJ)_ii with the
 *   same τ (Nielsen 1999 above; K. Madsen, H. B. Nielsen & O. Tingleff, Methods for Non-Linear Least
 *   Squares Problems, 2nd ed., IMM, DTU, 2004, Sec. 3.2, the choice of μ₀ before Algorithm 3.16; section
 *   numbers from memory). With the column scaling every diagonal entry of the scaled JᵀJ is 1 at the
 *   start, so theirs would be τ itself; σ_1² ≥ max diagonal keeps the first steps shorter when the
 *   columns are strongly correlated.
 * - Bounds by projection: the trial point is the step projected onto the box; a parameter sitting on a
 *   bound whose gradient points outward is held out of the step (an active-set variant of the projected
 *   LM of C. Kanzow, N. Yamashita & M. Fukushima, J. Comput. Appl. Math. 172 (2004) 375–397). The gain
 *   ratio uses the linear model's prediction for the projected step.
 * - Optional log coordinates for wide positive bounds (transform.ts).
 * - A trial point whose evaluation fails (simulation error, non-finite residual) is a rejected step.
 * - Stopping (MINPACK-style tests, Moré 1978 Sec. 7): relative cost change |ΔC|/C ≤ ftol for both the
 *   actual and the predicted reduction; relative step max_j |Δz_j|/(|z_j| + typ_j) ≤ xtol; scaled
 *   projected gradient max_j |g_j|/(‖J_j‖·‖r‖) ≤ gtol (the cosine of the angle between r and column j).
 *   Each is reported as 'converged' with the test's name. Otherwise: 'iteration-limit', 'time-budget',
 *   'stalled' (40 rejected trial steps in a row or λ ≥ 1e30 with no test passed), 'failed', 'aborted'.
 */
import { householderQR, applyQt, extractR } from '../stats/qr'
import { svd } from '../stats/svd'
import { BoxTransform } from './transform'
import {
  FitAborted, FitTimeout, sumSquares, yieldToEventLoop,
  type LsqProblem, type OptimiseOptions, type OptimiseResult, type StopStatus,
} from './lsq'
import type { ConvergenceTest } from '../../api/fit'

export const LM_DEFAULTS = { maxIterations: 200, ftol: 1e-10, xtol: 1e-10, gtol: 1e-10 }

export async function levenbergMarquardt(
  prob: LsqProblem, theta0: ArrayLike<number>, opts: OptimiseOptions = {},
): Promise<OptimiseResult> {
  const { n, m } = prob
  const maxIter = opts.maxIterations ?? LM_DEFAULTS.maxIterations
  const ftol = opts.ftol ?? LM_DEFAULTS.ftol
  const xtol = opts.xtol ?? LM_DEFAULTS.xtol
  const gtol = opts.gtol ?? LM_DEFAULTS.gtol
  const tr = new BoxTransform(prob.lower, prob.upper, opts.logTransform ?? true)

  const theta = new Float64Array(n)
  const thetaT = new Float64Array(n)
  const z = new Float64Array(n)
  const zT = new Float64Array(n)
  const r = new Float64Array(m)
  const rT = new Float64Array(m)
  const jac = new Float64Array(m * n)
  const jacT = new Float64Array(m * n)
  const jz = new Float64Array(m * n)
  const work = new Float64Array(m * n)
  const qtr = new Float64Array(m)
  const q = new Float64Array(m)
  const beta = new Float64Array(n)
  const d = new Float64Array(n)
  const g = new Float64Array(n)
  const dz = new Float64Array(n)
  const typ = new Float64Array(n)
  const costHistory: number[] = []

  for (let j = 0; j < n; j++) theta[j] = Math.min(prob.upper[j], Math.max(prob.lower[j], theta0[j]))
  tr.toZ(theta, z)
  for (let j = 0; j < n; j++) {
    const range = tr.zHi[j] - tr.zLo[j]
    typ[j] = tr.isLog[j] ? 1 : Number.isFinite(range) ? 1e-6 * range : 1e-8
  }

  // a time-out or an abort inside a simulation ends the fit at the last accepted point
  let interrupted: 'aborted' | 'time-budget' | null = null
  const evaluate = async (th: Float64Array, rr: Float64Array, jj: Float64Array): Promise<boolean> => {
    try {
      return prob.evaluateAsync ? await prob.evaluateAsync(th, rr, jj) : prob.evaluate(th, rr, jj)
    } catch (e) {
      if (e instanceof FitAborted) interrupted = 'aborted'
      else if (e instanceof FitTimeout) interrupted = 'time-budget'
      else throw e
      return false
    }
  }
  let evaluations = 1
  if (!(await evaluate(theta, r, jac)) || !allFinite(r) || !allFinite(jac)) {
    if (interrupted === 'aborted') return done('aborted', 'aborted by the caller', 0, NaN)
    if (interrupted === 'time-budget') return done('time-budget', 'time budget exhausted', 0, NaN)
    const why = prob.failure?.() ?? 'a residual or its sensitivity is not finite'
    return done('failed', `the model cannot be evaluated at the starting point: ${why}`, 0, NaN)
  }
  let cost = sumSquares(r)
  costHistory.push(cost)
  opts.onIteration?.({ iteration: 0, cost, parameters: Array.from(theta), residual: r })

  let lambda = -1
  let nu = 2
  let iter = 0

  function done(status: StopStatus, reason: string, iterations: number, c: number, convergedBy: ConvergenceTest | null = null): OptimiseResult {
    return { theta: Float64Array.from(theta), cost: c, status, convergedBy, reason, iterations, evaluations, costHistory }
  }

  function buildJz(): void {
    for (let j = 0; j < n; j++) {
      const f = tr.dThetaDz(theta, j)
      let s = 0
      for (let i = 0; i < m; i++) {
        const v = jac[j * m + i] * f
        jz[j * m + i] = v
        s += v * v
      }
      d[j] = Math.max(d[j], Math.sqrt(s))
      if (!(d[j] > 0)) d[j] = 1
    }
  }

  buildJz()
  const free: number[] = []

  while (true) {
    if (opts.signal?.aborted) return done('aborted', 'aborted by the caller', iter, cost)
    if (opts.deadline !== undefined && Date.now() > opts.deadline) {
      return done('time-budget', 'time budget exhausted', iter, cost)
    }
    if (iter >= maxIter) return done('iteration-limit', `iteration limit (${maxIter}) reached before any convergence test passed`, iter, cost)

    // gradient in z and the free set
    const rnorm = Math.sqrt(cost)
    free.length = 0
    let gmax = 0
    for (let j = 0; j < n; j++) {
      let s = 0
      for (let i = 0; i < m; i++) s += jz[j * m + i] * r[i]
      g[j] = s
      const range = tr.zHi[j] - tr.zLo[j]
      const eps = 1e-12 * (Number.isFinite(range) ? range : 1)
      const atLo = z[j] <= tr.zLo[j] + eps && s > 0
      const atHi = z[j] >= tr.zHi[j] - eps && s < 0
      if (!atLo && !atHi) {
        free.push(j)
        let cn = 0
        for (let i = 0; i < m; i++) cn += jz[j * m + i] * jz[j * m + i]
        cn = Math.sqrt(cn)
        if (cn > 0 && rnorm > 0) gmax = Math.max(gmax, Math.abs(s) / (cn * rnorm))
      }
    }
    if (free.length === 0) return done('converged', 'every parameter is held at a bound (projected gradient zero)', iter, cost, 'gradient')
    if (cost === 0 || gmax <= gtol) return done('converged', `projected gradient below gtol (${tolText(gtol)})`, iter, cost, 'gradient')

    // factorise the scaled free columns: J_F D_F⁻¹ = Q R, R = U S Vᵀ
    const nf = free.length
    for (let c = 0; c < nf; c++) {
      const j = free[c]
      const inv = 1 / d[j]
      for (let i = 0; i < m; i++) work[c * m + i] = jz[j * m + i] * inv
    }
    householderQR(work, m, nf, beta)
    const rr = new Float64Array(nf * nf)
    extractR(work, m, nf, rr)
    const dec = svd(rr, nf, nf)
    qtr.set(r)
    applyQt(work, m, nf, beta, qtr)
    // c_i = u_iᵀ (Qᵀ r)[0:nf]
    const cvec = new Float64Array(nf)
    for (let k = 0; k < nf; k++) {
      let s = 0
      for (let i = 0; i < nf; i++) s += dec.u[i * nf + k] * qtr[i]
      cvec[k] = s
    }
    if (lambda < 0) lambda = 1e-3 * dec.s[0] * dec.s[0]

    let accepted = false
    let tries = 0
    let relPred = 0
    let relAct = 0
    while (!accepted) {
      if (opts.signal?.aborted) return done('aborted', 'aborted by the caller', iter, cost)
      if (opts.deadline !== undefined && Date.now() > opts.deadline) return done('time-budget', 'time budget exhausted', iter, cost)
      if (++tries > 40 || !(lambda < 1e30)) {
        return done('stalled', `no trial step lowered the cost (${tries > 40 ? '40 rejected steps' : 'damping λ ≥ 1e30'}) before any convergence test passed; the cost may be known only to the integration accuracy`, iter, cost)
      }
      dz.fill(0)
      for (let c = 0; c < nf; c++) {
        let s = 0
        for (let k = 0; k < nf; k++) s -= (dec.s[k] / (dec.s[k] * dec.s[k] + lambda)) * cvec[k] * dec.v[c * nf + k]
        dz[free[c]] = s / d[free[c]]
      }
      let stepRel = 0
      for (let j = 0; j < n; j++) {
        zT[j] = Math.min(tr.zHi[j], Math.max(tr.zLo[j], z[j] + dz[j]))
        dz[j] = zT[j] - z[j]
        stepRel = Math.max(stepRel, Math.abs(dz[j]) / (Math.abs(tr.isLog[j] ? 0 : z[j]) + typ[j]))
      }
      // the step is negligible: converged by the step test (below, with no evaluation)
      if (stepRel <= xtol) break
      // predicted reduction of the linear model for the projected step: −(2 rᵀq + qᵀq), q = J δ
      q.fill(0)
      for (let j = 0; j < n; j++) {
        const dj = dz[j]
        if (dj === 0) continue
        for (let i = 0; i < m; i++) q[i] += jz[j * m + i] * dj
      }
      let rq = 0
      let qq = 0
      for (let i = 0; i < m; i++) {
        rq += r[i] * q[i]
        qq += q[i] * q[i]
      }
      const pred = -(2 * rq + qq)
      tr.toTheta(zT, thetaT)
      evaluations++
      const ok = (await evaluate(thetaT, rT, jacT)) && allFinite(rT) && allFinite(jacT)
      if (interrupted === 'aborted') return done('aborted', 'aborted by the caller', iter, cost)
      if (interrupted === 'time-budget') return done('time-budget', 'time budget exhausted', iter, cost)
      const costT = ok ? sumSquares(rT) : Infinity
      const rho = pred > 0 ? (cost - costT) / pred : -1
      if (ok && costT < cost && rho > 1e-4) {
        relAct = (cost - costT) / cost
        relPred = pred / cost
        theta.set(thetaT)
        z.set(zT)
        r.set(rT)
        jac.set(jacT)
        cost = costT
        lambda *= Math.max(1 / 3, 1 - Math.pow(2 * rho - 1, 3))
        nu = 2
        accepted = true
      } else {
        lambda *= nu
        nu *= 2
      }
    }
    if (!accepted) return done('converged', `relative step below xtol (${tolText(xtol)})`, iter, cost, 'step')
    iter++
    costHistory.push(cost)
    buildJz()
    opts.onIteration?.({ iteration: iter, cost, parameters: Array.from(theta), residual: r })
    if (relAct <= ftol && relPred <= ftol) {
      return done('converged', `relative cost change below ftol (${tolText(ftol)})`, iter, cost, 'cost-change')
    }
    if (iter % 4 === 0 && (opts.signal || opts.deadline !== undefined)) await yieldToEventLoop()
  }
}

function tolText(v: number): string {
  return Number(v.toPrecision(3)).toString()
}

function allFinite(a: Float64Array): boolean {
  for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i])) return false
  return true
}

export { FitAborted }
