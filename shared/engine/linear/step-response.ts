/**
 * Step response of a linear model, exact at the sample times for a step held constant:
 *   x_{k+1} = Φ x_k + Γ Δu,  Φ = e^(A h),  Γ = ∫₀ʰ e^(A s) ds B,
 * both read from the exponential of the augmented matrix [[A, B], [0, 0]]·h (Van Loan, "Computing
 * integrals involving the matrix exponential", IEEE Trans. Automat. Control 23 (1978) 395–404), the
 * exponential by scaling and squaring with a truncated Taylor series (Moler & Van Loan, "Nineteen
 * dubious ways to compute the exponential of a matrix, twenty-five years later", SIAM Review 45 (2003)
 * 3–49, Sec. 3 and method 3). Discrete models are iterated directly.
 */
import type { LinearModel } from './linearize'
import { matMul, norm1 } from './dense'

/** e^M for a small square matrix by scaling and squaring with an 18-term Taylor series */
export function expm(M: Float64Array, n: number): Float64Array {
  const nrm = norm1(M, n, n)
  let s = 0
  if (nrm > 0.5) s = Math.ceil(Math.log2(nrm / 0.5))
  const scale = 2 ** -s
  const X = Float64Array.from(M, (v) => v * scale)
  const E = new Float64Array(n * n)
  for (let i = 0; i < n; i++) E[i * n + i] = 1
  let term: Float64Array = Float64Array.from(E)
  for (let k = 1; k <= 18; k++) {
    term = matMul(term, X, n, n, n)
    for (let i = 0; i < n * n; i++) term[i] /= k
    for (let i = 0; i < n * n; i++) E[i] += term[i]
  }
  let R: Float64Array = E
  for (let k = 0; k < s; k++) R = matMul(R, R, n, n, n)
  return R
}

export interface StepResponse {
  input: number
  /** the step, declared input units */
  size: number
  t: Float64Array
  /** nt×ny absolute outputs (operating point + deviation), declared units */
  y: Float64Array
}

/** response to a step of `size` in input j at t = 0 from the linearisation point, at times 0, h, 2h, … */
export function linearStep(lin: LinearModel, j: number, size: number, h: number, steps: number): StepResponse {
  const { nx: n, nu: m, ny: p } = lin
  const t = Float64Array.from({ length: steps + 1 }, (_, k) => k * h)
  const y = new Float64Array((steps + 1) * p)
  let Phi: Float64Array
  let Gam: Float64Array
  if (lin.kind === 'discrete') {
    Phi = lin.A
    Gam = Float64Array.from({ length: n }, (_, i) => lin.B[i * m + j])
  } else {
    const N = n + 1
    const M = new Float64Array(N * N)
    for (let r = 0; r < n; r++) {
      for (let c = 0; c < n; c++) M[r * N + c] = lin.A[r * n + c] * h
      M[r * N + n] = lin.B[r * m + j] * h
    }
    const E = expm(M, N)
    Phi = new Float64Array(n * n)
    Gam = new Float64Array(n)
    for (let r = 0; r < n; r++) {
      for (let c = 0; c < n; c++) Phi[r * n + c] = E[r * N + c]
      Gam[r] = E[r * N + n]
    }
  }
  const x = new Float64Array(n)
  const xn = new Float64Array(n)
  // deviations from the linearisation point (an operating point: there the drift is zero)
  for (let k = 0; k <= steps; k++) {
    for (let i = 0; i < p; i++) {
      let acc = lin.y[i] + lin.D[i * m + j] * size
      for (let c = 0; c < n; c++) acc += lin.C[i * n + c] * x[c]
      y[k * p + i] = acc
    }
    for (let r = 0; r < n; r++) {
      let acc = Gam[r] * size
      for (let c = 0; c < n; c++) acc += Phi[r * n + c] * x[c]
      xn[r] = acc
    }
    x.set(xn)
  }
  return { input: j, size, t, y }
}
