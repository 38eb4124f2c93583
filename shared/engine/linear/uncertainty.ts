/**
 * First-order (delta-method) propagation of the fit's parameter covariance Σ_θ to derived quantities
 * q(θ) (poles, DC gains, frequency-response points): Σ_q ≈ J Σ_θ Jᵀ with J = ∂q/∂θ by central
 * differences, step h_j = 1e-4·σ_j (σ_j the parameter's standard error) so that the difference spans
 * a small fraction of the parameter's own uncertainty (JCGM 100:2008, Guide to the expression of
 * uncertainty in measurement, Sec. 5.1.2 and 5.2.2, law of propagation of uncertainty; numerical
 * sensitivity coefficients as in its Sec. 5.1.3, note 2). Only the standard deviations are returned.
 */
import type { FitResult } from '../../api/fit'
import type { CompiledModel } from '../../sheet/compiled'

export interface ParameterCovariance {
  /** parameter indices in the compiled model */
  index: number[]
  names: string[]
  /** covariance in internal units, k×k row-major */
  cov: Float64Array
}

/**
 * The covariance of the shared estimated parameters of a fit, in internal units, from its standard
 * errors and correlation matrix. Parameters without an interval (at a bound, or not identifiable)
 * are left out; null when none is left.
 */
export function covarianceFromFit(model: CompiledModel, fit: FitResult): ParameterCovariance | null {
  const rows = fit.parameters.filter((r) => r.experiment === null && r.stdError !== null && Number.isFinite(r.stdError))
  const index: number[] = []
  const names: string[] = []
  const se: number[] = []
  const corrIdx: number[] = []
  for (const r of rows) {
    const i = model.params.findIndex((p) => p.name === r.name)
    const c = fit.correlation.names.indexOf(r.name)
    if (i < 0 || c < 0) continue
    index.push(i)
    names.push(r.name)
    se.push((r.stdError as number) * Math.abs(model.params[i].scale))
    corrIdx.push(c)
  }
  const k = index.length
  if (k === 0) return null
  const cov = new Float64Array(k * k)
  for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) {
    const rho = a === b ? 1 : fit.correlation.matrix[corrIdx[a]]?.[corrIdx[b]] ?? 0
    cov[a * k + b] = (rho ?? 0) * se[a] * se[b]
  }
  return { index, names, cov }
}

/**
 * Standard deviations of q(θ) at θ = p (internal units). `q` returns a vector of fixed length (NaN
 * where undefined); a failed evaluation (exception) makes every entry NaN.
 */
export function propagate(q: (p: Float64Array) => Float64Array, p: Float64Array, pc: ParameterCovariance): Float64Array {
  const base = q(p)
  const nq = base.length
  const k = pc.index.length
  const J = new Float64Array(nq * k)
  const pp = Float64Array.from(p)
  for (let a = 0; a < k; a++) {
    const i = pc.index[a]
    const sd = Math.sqrt(pc.cov[a * k + a])
    const h = 1e-4 * (sd > 0 ? sd : Math.max(Math.abs(p[i]), 1e-12))
    let plus: Float64Array
    let minus: Float64Array
    try {
      pp[i] = p[i] + h
      plus = q(pp)
      pp[i] = p[i] - h
      minus = q(pp)
    } catch {
      return new Float64Array(nq).fill(NaN)
    } finally {
      pp[i] = p[i]
    }
    for (let r = 0; r < nq; r++) J[r * k + a] = (plus[r] - minus[r]) / (2 * h)
  }
  const out = new Float64Array(nq)
  for (let r = 0; r < nq; r++) {
    let v = 0
    for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) v += J[r * k + a] * pc.cov[a * k + b] * J[r * k + b]
    out[r] = Math.sqrt(Math.max(0, v))
  }
  return out
}

/**
 * Poles (re, im interleaved) of a perturbed model matched to the nominal ones: each nominal pole takes
 * the nearest unused perturbed pole, so that a small change of θ keeps the order.
 */
export function matchPoles(nominal: { re: Float64Array; im: Float64Array }, other: { re: Float64Array; im: Float64Array }): Float64Array {
  const n = nominal.re.length
  const used = new Uint8Array(n)
  const out = new Float64Array(2 * n)
  for (let a = 0; a < n; a++) {
    let best = -1
    let bd = Infinity
    for (let b = 0; b < n; b++) {
      if (used[b]) continue
      const d = Math.hypot(nominal.re[a] - other.re[b], nominal.im[a] - other.im[b])
      if (d < bd) { bd = d; best = b }
    }
    used[best] = 1
    out[2 * a] = other.re[best]
    out[2 * a + 1] = other.im[best]
  }
  return out
}
