/**
 * Transmission zeros of each single-input single-output channel (input j → output i) of a linear
 * model, i.e. the zeros of the numerator of g_ij(s) = c_i (sI − A)⁻¹ b_j + d_ij (Kailath, Linear
 * Systems, 1980, Sec. 2.4 and 6.5: the invariant zeros are where the Rosenbrock system matrix
 * [sI − A, −b; c, d] loses rank).
 *   d ≠ 0:  zeros = eig(A − b d⁻¹ c).
 *   d = 0:  with relative degree r (first k with c A^(k−1) b ≠ 0) and γ = c A^(r−1) b, the zero
 *           dynamics matrix Â = A − b γ⁻¹ c A^r leaves N = null([c; cA; …; cA^(r−1)]) invariant, and
 *           the zeros are eig(Nᵀ Â N) (n − r of them; Isidori, Nonlinear Control Systems, 3rd ed. 1995,
 *           Sec. 4.3, the linear case).
 * Channels are treated one at a time here; the zeros of the whole multivariable system are in
 * system-zeros.ts. Invariant zeros include modes that cancel (uncontrollable or unobservable ones).
 */
import { eigenvalues, type Eigenvalues } from './eigen'
import { matMul } from './dense'
import { svd } from '../stats/svd'

const REL_TOL = 1e-10

export interface ChannelZeros {
  input: number
  output: number
  /** null when the channel is identically zero */
  zeros: Eigenvalues | null
  relativeDegree: number | null
}

export function channelZeros(A: Float64Array, b: Float64Array, c: Float64Array, d: number, n: number): { zeros: Eigenvalues | null; relativeDegree: number | null } {
  const normA = Math.max(1e-300, Math.sqrt(A.reduce((s, v) => s + v * v, 0)))
  const normB = Math.sqrt(b.reduce((s, v) => s + v * v, 0))
  const normC = Math.sqrt(c.reduce((s, v) => s + v * v, 0))
  if (Math.abs(d) > 0) {
    const m = Float64Array.from(A)
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) m[i * n + j] -= (b[i] * c[j]) / d
    return { zeros: eigenvalues(m, n), relativeDegree: 0 }
  }
  // rows c A^k, k = 0 … n
  const rows: Float64Array[] = [Float64Array.from(c)]
  for (let k = 1; k <= n; k++) rows.push(matMul(rows[k - 1], A, 1, n, n))
  let r = -1
  let gamma = 0
  for (let k = 0; k < n; k++) {
    let s = 0
    for (let i = 0; i < n; i++) s += rows[k][i] * b[i]
    if (Math.abs(s) > REL_TOL * normC * normB * Math.max(1, normA) ** k) { r = k + 1; gamma = s; break }
  }
  if (r < 0) return { zeros: null, relativeDegree: null }
  const nz = n - r
  if (nz === 0) return { zeros: { re: new Float64Array(0), im: new Float64Array(0) }, relativeDegree: r }
  const ah = Float64Array.from(A)
  const cAr = rows[r]
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) ah[i * n + j] -= (b[i] * cAr[j]) / gamma
  // orthonormal basis of null(O_r): singular vectors of P = I − Q Qᵀ for singular value 1, where Q spans the rows of O_r
  const ot = new Float64Array(n * r)
  for (let k = 0; k < r; k++) for (let i = 0; i < n; i++) ot[i * r + k] = rows[k][i]
  const s1 = svd(ot, n, r)
  const P = new Float64Array(n * n)
  for (let i = 0; i < n; i++) P[i * n + i] = 1
  for (let k = 0; k < r; k++) {
    if (s1.s[k] <= 0) continue
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) P[i * n + j] -= s1.u[i * r + k] * s1.u[j * r + k]
  }
  const s2 = svd(P, n, n)
  const N = new Float64Array(n * nz)
  for (let i = 0; i < n; i++) for (let k = 0; k < nz; k++) N[i * nz + k] = s2.u[i * n + k]
  const nt = new Float64Array(nz * n)
  for (let i = 0; i < n; i++) for (let k = 0; k < nz; k++) nt[k * n + i] = N[i * nz + k]
  const red = matMul(matMul(nt, ah, nz, n, n), N, nz, n, nz)
  return { zeros: eigenvalues(red, nz), relativeDegree: r }
}

/** zeros of every channel of (A, B, C, D) */
export function transmissionZeros(A: Float64Array, B: Float64Array, C: Float64Array, D: Float64Array, n: number, m: number, p: number): ChannelZeros[] {
  const out: ChannelZeros[] = []
  for (let i = 0; i < p; i++) {
    for (let j = 0; j < m; j++) {
      const b = Float64Array.from({ length: n }, (_, k) => B[k * m + j])
      const c = C.slice(i * n, i * n + n)
      const z = channelZeros(A, b, c, D[i * m + j], n)
      out.push({ input: j, output: i, ...z })
    }
  }
  return out
}
