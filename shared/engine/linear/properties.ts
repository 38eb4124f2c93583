/**
 * Properties of a linear model (A, B, C, D): poles with time constants, natural frequencies and
 * damping; DC gains; controllability and observability ranks.
 *
 * - Continuous poles λ: time constant 1/|Re λ|, natural frequency |λ|, damping ζ = −Re λ / |λ|
 *   (Franklin, Powell & Emami-Naeini, Feedback Control of Dynamic Systems, 7th ed. 2015, Sec. 3.3).
 *   Discrete poles z are read through s = ln(z)/Ts (the same book, Sec. 8.2); a pole on the negative
 *   real axis or at the origin has no continuous equivalent (reported with nulls).
 * - DC gain: D − C A⁻¹ B (continuous), D + C (I − A)⁻¹ B (discrete); null when the matrix is singular
 *   (an integrating or marginal mode).
 * - Ranks: numerical rank of the Kalman matrices [B, AB, …, A^(n−1)B] and [C; CA; …; CA^(n−1)]
 *   (Kalman, Ho & Narendra, Contrib. Diff. Equations 1 (1963) 189–213) after scaling each column
 *   (resp. row) to unit length, counted by singular values σ_k > tol·σ_1 with tol = 1e-9 (the
 *   numerical rank, Golub & Van Loan, 4th ed. Sec. 5.4.1; the tolerance is ours, looser than
 *   n·eps because powers of A lose accuracy).
 */
import type { Eigenvalues } from './eigen'
import { matMul, solveMatrix } from './dense'
import { svd } from '../stats/svd'

export const RANK_TOL = 1e-9

export interface PoleInfo {
  re: number
  im: number
  /** sheet time units; null for a pole at zero or without a continuous equivalent */
  timeConstant: number | null
  /** rad per sheet time unit */
  naturalFrequency: number | null
  damping: number | null
  stable: boolean
}

export function poleInfo(ev: Eigenvalues, kind: 'continuous' | 'discrete', sampleTime: number | null): PoleInfo[] {
  const out: PoleInfo[] = []
  for (let k = 0; k < ev.re.length; k++) {
    const re = ev.re[k]
    const im = ev.im[k]
    let sr = re
    let si = im
    let ok = true
    if (kind === 'discrete') {
      const mag = Math.hypot(re, im)
      const ts = sampleTime ?? 1
      if (mag === 0 || (im === 0 && re < 0)) ok = false
      else {
        sr = Math.log(mag) / ts
        si = Math.atan2(im, re) / ts
      }
    }
    const wn = Math.hypot(sr, si)
    const stable = kind === 'discrete' ? Math.hypot(re, im) < 1 : re < 0
    out.push({
      re, im,
      timeConstant: ok && sr !== 0 ? 1 / Math.abs(sr) : null,
      naturalFrequency: ok ? wn : null,
      damping: ok && wn > 0 ? -sr / wn : null,
      stable,
    })
  }
  return out
}

/** ny×nu DC gain, or null when not defined */
export function dcGain(A: Float64Array, B: Float64Array, C: Float64Array, D: Float64Array, n: number, m: number, p: number, kind: 'continuous' | 'discrete'): Float64Array | null {
  if (n === 0) return Float64Array.from(D)
  const M = Float64Array.from(A)
  if (kind === 'continuous') for (let i = 0; i < n * n; i++) M[i] = -M[i]
  else for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) M[i * n + j] = (i === j ? 1 : 0) - A[i * n + j]
  const X = solveMatrix(M, B, n, m)
  if (!X) return null
  const G = matMul(C, X, p, n, m)
  for (let i = 0; i < p * m; i++) G[i] += D[i]
  return G
}

function numericalRank(M: Float64Array, rows: number, cols: number): { rank: number; singularValues: number[] } {
  // rank of M (rows×cols) = rank of Mᵀ; svd wants at least as many rows as columns
  const tall = rows >= cols
  const m = tall ? rows : cols
  const n = tall ? cols : rows
  const T = new Float64Array(m * n)
  for (let i = 0; i < rows; i++) for (let j = 0; j < cols; j++) {
    if (tall) T[i * n + j] = M[i * cols + j]
    else T[j * n + i] = M[i * cols + j]
  }
  const s = svd(T, m, n).s
  const top = s[0] ?? 0
  let rank = 0
  for (let k = 0; k < n; k++) if (top > 0 && s[k] > RANK_TOL * top) rank++
  return { rank, singularValues: Array.from(s) }
}

/** rank of [B, AB, …, A^(n−1)B] with unit-length columns */
export function controllabilityRank(A: Float64Array, B: Float64Array, n: number, m: number): number {
  if (n === 0) return 0
  const K = new Float64Array(n * n * m)
  let blk: Float64Array = Float64Array.from(B)
  for (let k = 0; k < n; k++) {
    for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) K[i * (n * m) + k * m + j] = blk[i * m + j]
    blk = matMul(A, blk, n, n, m)
  }
  const cols = n * m
  for (let j = 0; j < cols; j++) {
    let s = 0
    for (let i = 0; i < n; i++) s += K[i * cols + j] ** 2
    s = Math.sqrt(s)
    if (s > 0) for (let i = 0; i < n; i++) K[i * cols + j] /= s
  }
  return numericalRank(K, n, cols).rank
}

/** rank of [C; CA; …; CA^(n−1)] with unit-length rows */
export function observabilityRank(A: Float64Array, C: Float64Array, n: number, p: number): number {
  if (n === 0) return 0
  // duality: observability of (A, C) = controllability of (Aᵀ, Cᵀ)
  const At = new Float64Array(n * n)
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) At[j * n + i] = A[i * n + j]
  const Ct = new Float64Array(n * p)
  for (let i = 0; i < p; i++) for (let j = 0; j < n; j++) Ct[j * p + i] = C[i * n + j]
  return controllabilityRank(At, Ct, n, p)
}
