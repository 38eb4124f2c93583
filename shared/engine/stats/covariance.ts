/**
 * Linearised covariance of least-squares estimates, Cov(θ̂) ≈ s²·(JᵀJ)⁻¹ with s² = SSE/(N − p), formed
 * through the SVD of the column-scaled Jacobian (never an explicit inverse of JᵀJ):
 * J·D⁻¹ = U·S·Vᵀ ⇒ (JᵀJ)⁻¹ = D⁻¹·V·S⁻²·Vᵀ·D⁻¹.
 * References: D. M. Bates & D. G. Watts, Nonlinear Regression Analysis and Its Applications, 1988,
 * Sec. 2.3.1 (linear approximation inference regions, eq. 2.29); G. A. F. Seber & C. J. Wild,
 * Nonlinear Regression, 1989, Sec. 2.1; the SVD route of Golub & Van Loan, Matrix Computations,
 * 4th ed., 2013, Sec. 5.5.
 *
 * Identifiability: with each Jacobian column scaled to unit norm, a singular value below `rankTol`
 * times the largest (default 1e-6, i.e. a condition number of JᵀJ above 1e12) counts as zero: the
 * numerical rank is the number above it, the pseudo-inverse is truncated there (so a null direction
 * never contributes a huge or a falsely small variance), and the right singular vectors of the
 * dropped values span the null space (identifiability.ts names what is and is not determined).
 */
import { householderQR, extractR } from './qr'
import { svd, type SVD } from './svd'
import { studentTQuantile } from './distributions'

export interface CovarianceResult {
  /** n×n row-major covariance of the columns given (NaN where undefined) */
  cov: Float64Array
  stdError: Float64Array
  correlation: Float64Array
  /** singular values of the unit-column-scaled Jacobian, descending */
  scaledSingularValues: Float64Array
  /** numerical rank of the scaled Jacobian */
  rank: number
  /** indices (into the columns given) in the weakest direction when near rank-deficient */
  weakDirection: number[]
  /** n×n row-major right singular vectors of the unit-column-scaled Jacobian (columns, descending σ) */
  scaledV: Float64Array
  /** the column norms ‖J_j‖ used for the scaling */
  columnNorms: Float64Array
  s2: number
  dof: number
  tQuantile: number
}

/** SVD of R from the Householder QR of a tall column-major matrix (overwritten), one-sided Jacobi on R. */
function svdOfTall(a: Float64Array, m: number, n: number): SVD {
  const beta = new Float64Array(n)
  householderQR(a, m, n, beta)
  const r = new Float64Array(n * n)
  extractR(a, m, n, r)
  return svd(r, n, n)
}

/**
 * @param j column-major m×n Jacobian of the weighted residuals with respect to the parameters
 * @param sse weighted residual sum of squares
 * @param dofP number of estimated quantities p for s² = SSE/(N − p) (may exceed n when some are at bounds)
 */
export function linearisedCovariance(
  j: Float64Array, m: number, n: number, sse: number, dofP: number, rankTol = 1e-6, level = 0.95,
): CovarianceResult {
  const dof = m - dofP
  const s2 = dof > 0 ? sse / dof : NaN
  const tQuantile = dof > 0 ? studentTQuantile(0.5 + level / 2, dof) : NaN
  const cov = new Float64Array(n * n).fill(NaN)
  const stdError = new Float64Array(n).fill(NaN)
  const correlation = new Float64Array(n * n).fill(NaN)
  if (n === 0) {
    return { cov, stdError, correlation, scaledSingularValues: new Float64Array(0), rank: 0, weakDirection: [], scaledV: new Float64Array(0), columnNorms: new Float64Array(0), s2, dof, tQuantile }
  }
  const d = new Float64Array(n)
  const js = Float64Array.from(j)
  for (let c = 0; c < n; c++) {
    let s = 0
    for (let i = 0; i < m; i++) s += j[c * m + i] * j[c * m + i]
    d[c] = Math.sqrt(s)
    const inv = d[c] > 0 ? 1 / d[c] : 0
    for (let i = 0; i < m; i++) js[c * m + i] *= inv
  }
  const svdR = svdOfTall(js, m, n)
  const sv = svdR.s
  const smax = sv[0]
  let rank = 0
  if (d.every((x) => x > 0)) for (let k = 0; k < n; k++) if (sv[k] > rankTol * smax) rank++
  const weakDirection: number[] = []
  if (rank < n) {
    const k = n - 1
    for (let c = 0; c < n; c++) if (Math.abs(svdR.v[c * n + k]) >= 0.3 || d[c] === 0) weakDirection.push(c)
  }
  // pseudo-inverse through the singular values above the rank cutoff
  const cutoff = Math.max(rankTol * smax, Math.max(m, n) * 2.220446049250313e-16 * smax)
  for (let a = 0; a < n; a++) {
    for (let b = 0; b < n; b++) {
      let s = 0
      for (let k = 0; k < n; k++) {
        if (!(sv[k] > cutoff)) continue
        s += (svdR.v[a * n + k] * svdR.v[b * n + k]) / (sv[k] * sv[k])
      }
      cov[a * n + b] = d[a] > 0 && d[b] > 0 ? (s2 * s) / (d[a] * d[b]) : NaN
    }
  }
  for (let a = 0; a < n; a++) stdError[a] = Math.sqrt(cov[a * n + a])
  for (let a = 0; a < n; a++) {
    for (let b = 0; b < n; b++) correlation[a * n + b] = cov[a * n + b] / (stdError[a] * stdError[b])
  }
  return { cov, stdError, correlation, scaledSingularValues: sv, rank, weakDirection, scaledV: svdR.v, columnNorms: d, s2, dof, tQuantile }
}
