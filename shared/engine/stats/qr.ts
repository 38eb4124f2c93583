/**
 * Householder QR of a tall matrix stored column-major (a[j*m + i] = A[i][j]), in place.
 * Reference: G. H. Golub & C. F. Van Loan, Matrix Computations, 4th ed., 2013,
 * Algorithm 5.1.1 (Householder vector) and Sec. 5.2.1 (Householder QR).
 *
 * After `householderQR(a, m, n, beta)` the upper triangle of the first n rows holds R and the
 * part below the diagonal holds the essential parts of the Householder vectors (v[0] = 1 implied).
 */
export function householderQR(a: Float64Array, m: number, n: number, beta: Float64Array): void {
  for (let k = 0; k < n; k++) {
    const ck = k * m
    // norm of a[k:m, k] below the diagonal
    let sigma = 0
    for (let i = k + 1; i < m; i++) sigma += a[ck + i] * a[ck + i]
    const x0 = a[ck + k]
    if (sigma === 0) {
      beta[k] = 0
      continue
    }
    const mu = Math.sqrt(x0 * x0 + sigma)
    // v0 chosen to avoid cancellation (Golub & Van Loan, Alg. 5.1.1)
    const v0 = x0 <= 0 ? x0 - mu : -sigma / (x0 + mu)
    const b = (2 * v0 * v0) / (sigma + v0 * v0)
    for (let i = k + 1; i < m; i++) a[ck + i] /= v0
    beta[k] = b
    a[ck + k] = mu
    // apply (I - b v vᵀ) to the remaining columns
    for (let j = k + 1; j < n; j++) {
      const cj = j * m
      let s = a[cj + k]
      for (let i = k + 1; i < m; i++) s += a[ck + i] * a[cj + i]
      s *= b
      a[cj + k] -= s
      for (let i = k + 1; i < m; i++) a[cj + i] -= s * a[ck + i]
    }
  }
}

/** y ← Qᵀ y using the reflectors stored by householderQR. */
export function applyQt(a: Float64Array, m: number, n: number, beta: Float64Array, y: Float64Array): void {
  for (let k = 0; k < n; k++) {
    const b = beta[k]
    if (b === 0) continue
    const ck = k * m
    let s = y[k]
    for (let i = k + 1; i < m; i++) s += a[ck + i] * y[i]
    s *= b
    y[k] -= s
    for (let i = k + 1; i < m; i++) y[i] -= s * a[ck + i]
  }
}

/** Copy the n×n upper-triangular R (row-major) out of the factorised array. */
export function extractR(a: Float64Array, m: number, n: number, r: Float64Array): void {
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) r[i * n + j] = j >= i ? a[j * m + i] : 0
  }
}
