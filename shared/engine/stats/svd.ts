/**
 * Singular value decomposition of a small dense matrix by the one-sided Jacobi method.
 * References: M. R. Hestenes, "Inversion of matrices by biorthogonalization and related results",
 * J. SIAM 6 (1958) 51–90; J. Demmel & K. Veselić, "Jacobi's method is more accurate than QR",
 * SIAM J. Matrix Anal. Appl. 13 (1992) 1204–1245 (Algorithm 4.1, one-sided Jacobi).
 *
 * For the tall Jacobians of a fit we first reduce by Householder QR (qr.ts) and take the SVD of
 * the small triangular factor R, so J = Q·U·S·Vᵀ.
 */
export interface SVD {
  /** m×n, row-major */
  u: Float64Array
  /** n singular values, descending */
  s: Float64Array
  /** n×n, row-major; columns are the right singular vectors */
  v: Float64Array
  m: number
  n: number
}

/** SVD of an m×n (m ≥ n) row-major matrix. Does not modify `a`. */
export function svd(a: Float64Array, m: number, n: number): SVD {
  if (m < n) throw new Error('svd: needs at least as many rows as columns')
  // work on columns: w (m×n row-major copy), v = I
  const w = Float64Array.from(a)
  const v = new Float64Array(n * n)
  for (let i = 0; i < n; i++) v[i * n + i] = 1
  const eps = 2.220446049250313e-16
  for (let sweep = 0; sweep < 60; sweep++) {
    let rotated = false
    for (let p = 0; p < n - 1; p++) {
      for (let q = p + 1; q < n; q++) {
        let alpha = 0
        let beta = 0
        let gamma = 0
        for (let i = 0; i < m; i++) {
          const wp = w[i * n + p]
          const wq = w[i * n + q]
          alpha += wp * wp
          beta += wq * wq
          gamma += wp * wq
        }
        if (gamma === 0 || Math.abs(gamma) <= eps * Math.sqrt(alpha * beta)) continue
        rotated = true
        const zeta = (beta - alpha) / (2 * gamma)
        const t = Math.sign(zeta || 1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta))
        const c = 1 / Math.sqrt(1 + t * t)
        const s = c * t
        for (let i = 0; i < m; i++) {
          const wp = w[i * n + p]
          const wq = w[i * n + q]
          w[i * n + p] = c * wp - s * wq
          w[i * n + q] = s * wp + c * wq
        }
        for (let i = 0; i < n; i++) {
          const vp = v[i * n + p]
          const vq = v[i * n + q]
          v[i * n + p] = c * vp - s * vq
          v[i * n + q] = s * vp + c * vq
        }
      }
    }
    if (!rotated) break
  }
  const sv = new Float64Array(n)
  for (let j = 0; j < n; j++) {
    let s2 = 0
    for (let i = 0; i < m; i++) s2 += w[i * n + j] * w[i * n + j]
    sv[j] = Math.sqrt(s2)
  }
  // sort descending
  const order = Array.from({ length: n }, (_, i) => i).sort((x, y) => sv[y] - sv[x])
  const u = new Float64Array(m * n)
  const vs = new Float64Array(n * n)
  const ss = new Float64Array(n)
  for (let k = 0; k < n; k++) {
    const j = order[k]
    ss[k] = sv[j]
    for (let i = 0; i < m; i++) u[i * n + k] = sv[j] > 0 ? w[i * n + j] / sv[j] : 0
    for (let i = 0; i < n; i++) vs[i * n + k] = v[i * n + j]
  }
  return { u, s: ss, v: vs, m, n }
}
