/**
 * In-place LU decomposition with partial (row) pivoting and the matching triangular solves, on a
 * row-major n×n Float64Array (Golub & Van Loan, Matrix Computations, 4th ed. 2013, Algorithm 3.4.1
 * "Gaussian elimination with partial pivoting", and Sec. 3.1 for the substitutions). No allocation.
 */

/** Factors a in place (L unit lower, U upper), pivots into piv. Returns false when singular. */
export function luFactor(a: Float64Array, n: number, piv: Int32Array): boolean {
  for (let k = 0; k < n; k++) {
    let p = k
    let max = Math.abs(a[k * n + k])
    for (let i = k + 1; i < n; i++) {
      const v = Math.abs(a[i * n + k])
      if (v > max) {
        max = v
        p = i
      }
    }
    piv[k] = p
    if (max === 0 || !Number.isFinite(max)) return false
    if (p !== k) {
      const rp = p * n
      const rk = k * n
      for (let j = 0; j < n; j++) {
        const tmp = a[rk + j]
        a[rk + j] = a[rp + j]
        a[rp + j] = tmp
      }
    }
    const rk = k * n
    const inv = 1 / a[rk + k]
    for (let i = k + 1; i < n; i++) {
      const ri = i * n
      const l = a[ri + k] * inv
      a[ri + k] = l
      if (l !== 0) for (let j = k + 1; j < n; j++) a[ri + j] -= l * a[rk + j]
    }
  }
  return true
}

/** Solves (LU) x = b in place on b[off .. off+n). */
export function luSolve(a: Float64Array, n: number, piv: Int32Array, b: Float64Array, off = 0): void {
  for (let k = 0; k < n; k++) {
    const p = piv[k]
    if (p !== k) {
      const tmp = b[off + k]
      b[off + k] = b[off + p]
      b[off + p] = tmp
    }
  }
  for (let i = 1; i < n; i++) {
    let s = b[off + i]
    const ri = i * n
    for (let j = 0; j < i; j++) s -= a[ri + j] * b[off + j]
    b[off + i] = s
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[off + i]
    const ri = i * n
    for (let j = i + 1; j < n; j++) s -= a[ri + j] * b[off + j]
    b[off + i] = s / a[ri + i]
  }
}

/**
 * Solves (LU) x = b in place for `count` right-hand sides stored one after another from b[off]
 * (n values each): one pass over the factors serves them all, each factor entry read once for
 * every right-hand side (the forward and back substitutions of Golub & Van Loan, Sec. 3.1, with
 * the loop over right-hand sides innermost; their Sec. 3.1.5 on multiple right-hand sides).
 * Divides by each pivot through its reciprocal, so the results may differ from luSolve's in the
 * last bit.
 */
export function luSolveBlocks(a: Float64Array, n: number, piv: Int32Array, b: Float64Array, off: number, count: number): void {
  const end = off + count * n
  for (let k = 0; k < n; k++) {
    const p = piv[k]
    if (p === k) continue
    for (let o = off; o < end; o += n) {
      const tmp = b[o + k]
      b[o + k] = b[o + p]
      b[o + p] = tmp
    }
  }
  for (let i = 1; i < n; i++) {
    const ri = i * n
    for (let j = 0; j < i; j++) {
      const l = a[ri + j]
      if (l !== 0) for (let o = off; o < end; o += n) b[o + i] -= l * b[o + j]
    }
  }
  for (let i = n - 1; i >= 0; i--) {
    const ri = i * n
    for (let j = i + 1; j < n; j++) {
      const v = a[ri + j]
      if (v !== 0) for (let o = off; o < end; o += n) b[o + i] -= v * b[o + j]
    }
    const inv = 1 / a[ri + i]
    for (let o = off; o < end; o += n) b[o + i] *= inv
  }
}
