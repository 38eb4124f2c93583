/**
 * Equation-error (one-step-ahead, "ARX-type") estimate for discrete sheets that are linear in their free
 * parameters and whose states are all measured directly: regress x(k+1) on the measured x(k) and u(k),
 *   y(k+1) − f(y(k), u(k); θ₀) + Φ(k)·θ₀ = Φ(k)·θ,  Φ = ∂f/∂θ (constant in θ),
 * solved by ordinary least squares through Householder QR (the normal equations are never formed).
 * With noise on the measured output the regressor y(k) is noisy too, so the estimate is biased
 * (the errors-in-variables bias; L. Ljung, System Identification: Theory for the User, 2nd ed., 1999,
 * Sec. 7.3 and Sec. 4.2 on output-error vs. equation-error structures). It is offered as a cheap start
 * for the prediction-error fit and as a comparison row.
 */
import type { FitProblem } from './problem'
import { householderQR, applyQt } from '../stats/qr'
import { linearisedCovariance } from '../stats/covariance'
import { sampleTrace } from './interp'
import { sumSquares } from './lsq'

export interface EquationErrorEstimate {
  quantityIndex: number[]
  theta: Float64Array
  stdError: Float64Array
  sse: number
  outputErrorSse(prob: FitProblem): number
}

export function equationErrorEstimate(prob: FitProblem): EquationErrorEstimate {
  const model = prob.model
  if (model.kind !== 'discrete') throw new Error('it needs a discrete-time sheet')
  if (model.nd > 0) throw new Error('it does not handle delayed inputs')
  if (prob.quantities.some((q) => q.kind !== 'param' || q.experiment !== null)) {
    throw new Error('it handles shared parameters only (no local parameters, no estimated initial states)')
  }
  const { nx, np, nu, ny } = model
  const ts = model.sampleTime ?? 1
  const qIdx = prob.quantities.map((_, i) => i)
  const pIdx = prob.quantities.map((q) => q.index)
  const nf = pIdx.length
  // each state measured directly by an output y_j = x_i
  const stateOut = new Int32Array(nx).fill(-1)
  const x = new Float64Array(nx).fill(1)
  const p0 = Float64Array.from(prob.baseP)
  pIdx.forEach((pi, k) => (p0[pi] = prob.start[k]))
  const u = new Float64Array(nu + model.nd)
  const gx = new Float64Array(ny * nx)
  const gp = new Float64Array(ny * np)
  const gu = new Float64Array(ny * Math.max(1, nu))
  model.dgdx(0, x, p0, u, gx)
  model.dgdp(0, x, p0, u, gp)
  if (nu > 0) model.dgdu(0, x, p0, u, gu)
  for (let j = 0; j < ny; j++) {
    let hit = -1
    let clean = true
    for (let i = 0; i < nx; i++) {
      const v = gx[j * nx + i]
      if (v === 1 && hit < 0) hit = i
      else if (v !== 0) clean = false
    }
    for (let k = 0; k < np; k++) if (gp[j * np + k] !== 0) clean = false
    for (let k = 0; k < nu; k++) if (gu[j * nu + k] !== 0) clean = false
    if (clean && hit >= 0 && stateOut[hit] < 0) stateOut[hit] = j
  }
  for (let i = 0; i < nx; i++) {
    if (stateOut[i] < 0) throw new Error(`state '${model.states[i].name}' is not measured directly by an output`)
  }
  const targets: number[] = []
  const regress: number[][] = Array.from({ length: nf }, () => [])
  const fBuf = new Float64Array(nx)
  const dfdp = new Float64Array(nx * np)
  const dfdp2 = new Float64Array(nx * np)
  const p1 = Float64Array.from(p0)
  pIdx.forEach((pi, k) => (p1[pi] = 0.5 * (prob.lower[k] + prob.upper[k]) + 0.1 * (prob.upper[k] - prob.lower[k])))
  const f1 = new Float64Array(nx)
  for (const ex of prob.experiments) {
    const tt = ex.tOut
    const nt = tt.length
    const meas = new Float64Array(nt * nx).fill(NaN)
    for (let i = 0; i < ex.obs.count; i++) {
      const j = ex.obs.oIdx[i]
      const st = stateOut.indexOf(j)
      if (st >= 0) meas[ex.obs.tIdx[i] * nx + st] = ex.obs.y[i]
    }
    const uAt = model.inputs.map((inp, i) => {
      const out = new Float64Array(nt)
      const tr = ex.inputs[i]
      if (tr) sampleTrace(tr, tt, inp.interp, out)
      else out.fill(inp.value)
      return out
    })
    for (let k = 0; k + 1 < nt; k++) {
      if (Math.abs(tt[k + 1] - tt[k] - ts) > 1e-9 * ts) continue
      let ok = true
      for (let i = 0; i < nx; i++) if (!Number.isFinite(meas[k * nx + i]) || !Number.isFinite(meas[(k + 1) * nx + i])) ok = false
      if (!ok) continue
      for (let i = 0; i < nx; i++) x[i] = meas[k * nx + i]
      for (let i = 0; i < nu; i++) u[i] = uAt[i][k]
      model.rhs(tt[k], x, p0, u, fBuf)
      model.dfdp(tt[k], x, p0, u, dfdp)
      // linear in the free parameters: same ∂f/∂θ and an exact affine change at a second point
      model.dfdp(tt[k], x, p1, u, dfdp2)
      model.rhs(tt[k], x, p1, u, f1)
      for (let i = 0; i < nx; i++) {
        let lin = fBuf[i]
        for (let c = 0; c < nf; c++) {
          const a = dfdp[i * np + pIdx[c]]
          if (Math.abs(a - dfdp2[i * np + pIdx[c]]) > 1e-9 * (1 + Math.abs(a))) throw new Error('the sheet is not linear in its free parameters')
          lin += a * (p1[pIdx[c]] - p0[pIdx[c]])
        }
        if (Math.abs(lin - f1[i]) > 1e-9 * (1 + Math.abs(f1[i]))) throw new Error('the sheet is not linear in its free parameters')
        let b = meas[(k + 1) * nx + i] - fBuf[i]
        for (let c = 0; c < nf; c++) b += dfdp[i * np + pIdx[c]] * p0[pIdx[c]]
        targets.push(b)
        for (let c = 0; c < nf; c++) regress[c].push(dfdp[i * np + pIdx[c]])
      }
    }
  }
  const m = targets.length
  if (m <= nf) throw new Error('too few consecutive samples with every state measured')
  const a = new Float64Array(m * nf)
  for (let c = 0; c < nf; c++) a.set(regress[c], c * m)
  const qr = Float64Array.from(a)
  const beta = new Float64Array(nf)
  householderQR(qr, m, nf, beta)
  const b = Float64Array.from(targets)
  applyQt(qr, m, nf, beta, b)
  const theta = new Float64Array(nf)
  for (let i = nf - 1; i >= 0; i--) {
    let s = b[i]
    for (let j = i + 1; j < nf; j++) s -= qr[j * m + i] * theta[j]
    const d = qr[i * m + i]
    if (d === 0) throw new Error('the regressors are linearly dependent')
    theta[i] = s / d
  }
  let sse = 0
  for (let i = 0; i < m; i++) {
    let s = -targets[i]
    for (let c = 0; c < nf; c++) s += a[c * m + i] * theta[c]
    sse += s * s
  }
  const cov = linearisedCovariance(a, m, nf, sse, nf)
  return {
    quantityIndex: qIdx, theta, stdError: cov.stdError, sse,
    outputErrorSse(pr: FitProblem): number {
      const th = Float64Array.from(pr.start)
      qIdx.forEach((q, k) => (th[q] = Math.min(pr.upper[q], Math.max(pr.lower[q], theta[k]))))
      const r = new Float64Array(pr.m)
      return pr.evaluate(th, r, null) ? sumSquares(r) : NaN
    },
  }
}
