/**
 * Small dense matrix helpers for the linear analysis (row-major Float64Array). Solves use LU with
 * partial pivoting (Golub & Van Loan, Matrix Computations, 4th ed. 2013, Algorithm 3.4.1); the complex
 * solve is the same elimination in complex arithmetic on split real/imaginary arrays.
 */
import { luFactor, luSolve } from '../solvers/lu'

/** c = a (m×k) · b (k×n) */
export function matMul(a: Float64Array, b: Float64Array, m: number, k: number, n: number): Float64Array<ArrayBuffer> {
  const c = new Float64Array(m * n)
  for (let i = 0; i < m; i++) {
    for (let q = 0; q < k; q++) {
      const v = a[i * k + q]
      if (v === 0) continue
      for (let j = 0; j < n; j++) c[i * n + j] += v * b[q * n + j]
    }
  }
  return c
}

/** X = A⁻¹ B for square A (n×n) and B (n×m); null when A is singular. */
export function solveMatrix(a: Float64Array, b: Float64Array, n: number, m: number): Float64Array | null {
  const lu = Float64Array.from(a)
  const piv = new Int32Array(n)
  if (!luFactor(lu, n, piv)) return null
  const x = new Float64Array(n * m)
  const col = new Float64Array(n)
  for (let j = 0; j < m; j++) {
    for (let i = 0; i < n; i++) col[i] = b[i * m + j]
    luSolve(lu, n, piv, col)
    for (let i = 0; i < n; i++) x[i * m + j] = col[i]
  }
  // a pivot of rounding size makes the solution meaningless
  let big = 0
  let small = Infinity
  for (let i = 0; i < n; i++) {
    const d = Math.abs(lu[i * n + i])
    big = Math.max(big, d)
    small = Math.min(small, d)
  }
  if (n > 0 && small <= 1e-13 * big) return null
  for (let i = 0; i < x.length; i++) if (!Number.isFinite(x[i])) return null
  return x
}

/**
 * Solves (Ar + i·Ai) X = (Br + i·Bi) for X (n×m), in place on the copies it makes. Returns false when
 * the matrix is singular.
 */
export function complexSolve(
  ar: Float64Array, ai: Float64Array, br: Float64Array, bi: Float64Array, n: number, m: number,
  xr: Float64Array, xi: Float64Array,
): boolean {
  xr.set(br)
  xi.set(bi)
  for (let k = 0; k < n; k++) {
    let p = k
    let max = Math.hypot(ar[k * n + k], ai[k * n + k])
    for (let i = k + 1; i < n; i++) {
      const v = Math.hypot(ar[i * n + k], ai[i * n + k])
      if (v > max) { max = v; p = i }
    }
    if (max === 0 || !Number.isFinite(max)) return false
    if (p !== k) {
      for (let j = 0; j < n; j++) {
        let t = ar[k * n + j]; ar[k * n + j] = ar[p * n + j]; ar[p * n + j] = t
        t = ai[k * n + j]; ai[k * n + j] = ai[p * n + j]; ai[p * n + j] = t
      }
      for (let j = 0; j < m; j++) {
        let t = xr[k * m + j]; xr[k * m + j] = xr[p * m + j]; xr[p * m + j] = t
        t = xi[k * m + j]; xi[k * m + j] = xi[p * m + j]; xi[p * m + j] = t
      }
    }
    const dr = ar[k * n + k]
    const di = ai[k * n + k]
    const d2 = dr * dr + di * di
    for (let i = k + 1; i < n; i++) {
      // l = a_ik / a_kk
      const nr = ar[i * n + k]
      const ni = ai[i * n + k]
      if (nr === 0 && ni === 0) continue
      const lr = (nr * dr + ni * di) / d2
      const li = (ni * dr - nr * di) / d2
      for (let j = k; j < n; j++) {
        const ur = ar[k * n + j]
        const ui = ai[k * n + j]
        ar[i * n + j] -= lr * ur - li * ui
        ai[i * n + j] -= lr * ui + li * ur
      }
      for (let j = 0; j < m; j++) {
        const ur = xr[k * m + j]
        const ui = xi[k * m + j]
        xr[i * m + j] -= lr * ur - li * ui
        xi[i * m + j] -= lr * ui + li * ur
      }
    }
  }
  for (let i = n - 1; i >= 0; i--) {
    const dr = ar[i * n + i]
    const di = ai[i * n + i]
    const d2 = dr * dr + di * di
    for (let j = 0; j < m; j++) {
      let sr = xr[i * m + j]
      let si = xi[i * m + j]
      for (let q = i + 1; q < n; q++) {
        const cr = ar[i * n + q]
        const ci = ai[i * n + q]
        const yr = xr[q * m + j]
        const yi = xi[q * m + j]
        sr -= cr * yr - ci * yi
        si -= cr * yi + ci * yr
      }
      xr[i * m + j] = (sr * dr + si * di) / d2
      xi[i * m + j] = (si * dr - sr * di) / d2
    }
  }
  return true
}

/** rows of a row-major matrix as nested arrays (for JSON) */
export function toRows(a: Float64Array, m: number, n: number): number[][] {
  return Array.from({ length: m }, (_, i) => Array.from(a.subarray(i * n, i * n + n)))
}

/** 1-norm (largest absolute column sum) */
export function norm1(a: Float64Array, m: number, n: number): number {
  let best = 0
  for (let j = 0; j < n; j++) {
    let s = 0
    for (let i = 0; i < m; i++) s += Math.abs(a[i * n + j])
    best = Math.max(best, s)
  }
  return best
}
