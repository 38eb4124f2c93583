/**
 * Invariant (transmission) zeros of a whole multivariable system (A, B, C, D): the finite values s
 * where the Rosenbrock system pencil
 *
 *     P(s) = [ A − sI   B ]      ((n + p) × (n + m))
 *            [   C      D ]
 *
 * loses rank below its normal rank (Rosenbrock, State-space and Multivariable Theory, 1970, Ch. 3;
 * MacFarlane & Karcanias, Int. J. Control 24 (1976) 33–74).
 *
 * Method: the reduction of Emami-Naeini & Van Dooren, "Computation of zeros of linear multivariable
 * systems", Automatica 18 (1982) 415–430, Sec. 3, with orthogonal rank decisions by the singular value
 * decomposition:
 *   reduce(A, B, C, D) — while D lacks full row rank: compress the rows of D (Uᵀ D = [D₁; 0]), split
 *   Uᵀ C = [C₁; C₂], compress the columns of C₂ by an orthogonal change of state coordinates
 *   x = T [x₁; x₂] so that C₂ T = [0  Z] with Z of full column rank μ; the μ rows [0 Z 0] of the pencil
 *   remove the x₂ columns, so rank P(s) = μ + rank P′(s) for the smaller system
 *       A′ = A₁₁,  B′ = B₁,  C′ = [A₂₁; C₁₁],  D′ = [B₂; D₁]
 *   (n − μ states; zero rows, μ = 0, are dropped). The finite zeros do not change.
 *   Applied to the system and then to the dual (Aᵀ, Cᵀ, Bᵀ, Dᵀ) of the result, it ends with a square
 *   invertible D_f (the pencil then has full normal rank in both directions), and the zeros are the
 *   eigenvalues of A_f − B_f D_f⁻¹ C_f (the pencil [A_f − sI, B_f; C_f, D_f] is singular exactly where
 *   its Schur complement with respect to D_f is).
 * Ranks: singular values above tol = 1e-10 · ‖[A B; C D]‖_F (our choice; Emami-Naeini & Van Dooren use
 * a multiple of the machine precision times the same norm, looser here because the sheet's Jacobians
 * carry rounding from code generation).
 * The zeros include input- and output-decoupling zeros (modes that cancel), as invariant zeros do.
 */
import { eigenvalues, type Eigenvalues } from './eigen'
import { matMul, solveMatrix } from './dense'
import { LinearAlgebraError } from './errors'
import { svd } from '../stats/svd'

export const ZERO_RANK_TOL = 1e-10

interface System {
  A: Float64Array
  B: Float64Array
  C: Float64Array
  D: Float64Array
  n: number
  m: number
  p: number
}

export interface SystemZeros {
  zeros: Eigenvalues
  /** normal rank of the system pencil (its rank at a generic s) */
  normalRank: number
  /** rows and columns of the pencil */
  rows: number
  columns: number
}

function transpose(a: Float64Array, r: number, c: number): Float64Array<ArrayBuffer> {
  const t = new Float64Array(r * c)
  for (let i = 0; i < r; i++) for (let j = 0; j < c; j++) t[j * r + i] = a[i * c + j]
  return t
}

/**
 * Right singular vectors of an r×c matrix as a full c×c orthogonal matrix (columns, largest singular
 * value first) and the numerical rank. The one-sided Jacobi SVD accumulates V as a product of
 * rotations, so V is orthogonal even where singular values vanish; fewer rows than columns are padded
 * with zero rows.
 */
function rightBasis(a: Float64Array, r: number, c: number, tol: number): { v: Float64Array; rank: number } {
  if (c === 0) return { v: new Float64Array(0), rank: 0 }
  const rows = Math.max(r, c)
  const padded = new Float64Array(rows * c)
  padded.set(a.subarray(0, r * c))
  const d = svd(padded, rows, c)
  let rank = 0
  for (let k = 0; k < c; k++) if (d.s[k] > tol) rank++
  return { v: d.v, rank }
}

/** Uᵀ M with U's columns the left singular vectors of M (r×c): the first `rank` rows carry M. */
function leftBasis(a: Float64Array, r: number, c: number, tol: number): { u: Float64Array; rank: number } {
  const { v, rank } = rightBasis(transpose(a, r, c), c, r, tol)
  return { u: v, rank }
}

function dual(s: System): System {
  return { A: transpose(s.A, s.n, s.n), B: transpose(s.C, s.p, s.n), C: transpose(s.B, s.n, s.m), D: transpose(s.D, s.p, s.m), n: s.n, m: s.p, p: s.m }
}

/** Rows r0…r1−1 and columns c0…c1−1 of an r×c matrix. */
function block(a: Float64Array, c: number, r0: number, r1: number, c0: number, c1: number): Float64Array<ArrayBuffer> {
  const w = c1 - c0
  const out = new Float64Array((r1 - r0) * w)
  for (let i = r0; i < r1; i++) for (let j = c0; j < c1; j++) out[(i - r0) * w + (j - c0)] = a[i * c + j]
  return out
}

function stack(top: Float64Array, bottom: Float64Array): Float64Array<ArrayBuffer> {
  const out = new Float64Array(top.length + bottom.length)
  out.set(top)
  out.set(bottom, top.length)
  return out
}

/** Emami-Naeini & Van Dooren's `reduce`: an equivalent system (same finite zeros) whose D has full row rank. */
function reduce(s0: System, tol: number): System {
  let s = s0
  for (;;) {
    const { n, m, p } = s
    if (p === 0) return s
    // rows of D: Uᵀ [C D] = [C₁ D₁; C₂ 0]
    const { u, rank: rho } = leftBasis(s.D, p, m, tol)
    if (rho === p) return s
    const ut = transpose(u, p, p)
    const Cu = matMul(ut, s.C, p, p, n)
    const Du = matMul(ut, s.D, p, p, m)
    const C1 = block(Cu, n, 0, rho, 0, n)
    const D1 = block(Du, m, 0, rho, 0, m)
    const C2 = block(Cu, n, rho, p, 0, n)
    // columns of C₂: T = [null part | range part], C₂ T = [0 Z]
    const { v, rank: mu } = rightBasis(C2, p - rho, n, tol)
    if (mu === 0) return { ...s, C: C1, D: D1, p: rho }
    const n1 = n - mu
    const T = new Float64Array(n * n)
    for (let i = 0; i < n; i++) {
      for (let k = 0; k < n1; k++) T[i * n + k] = v[i * n + mu + k]
      for (let k = 0; k < mu; k++) T[i * n + n1 + k] = v[i * n + k]
    }
    const Tt = transpose(T, n, n)
    const At = matMul(matMul(Tt, s.A, n, n, n), T, n, n, n)
    const Bt = matMul(Tt, s.B, n, n, m)
    const C1t = matMul(C1, T, rho, n, n)
    s = {
      A: block(At, n, 0, n1, 0, n1),
      B: block(Bt, m, 0, n1, 0, m),
      C: stack(block(At, n, n1, n, 0, n1), block(C1t, n, 0, rho, 0, n1)),
      D: stack(block(Bt, m, n1, n, 0, m), D1),
      n: n1,
      m,
      p: mu + rho,
    }
  }
}

/** the pencil P(s) at a real s */
function pencilAt(s: System, at: number): Float64Array<ArrayBuffer> {
  const { n, m, p } = s
  const c = n + m
  const P = new Float64Array((n + p) * c)
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) P[i * c + j] = s.A[i * n + j] - (i === j ? at : 0)
    for (let j = 0; j < m; j++) P[i * c + n + j] = s.B[i * m + j]
  }
  for (let i = 0; i < p; i++) {
    for (let j = 0; j < n; j++) P[(n + i) * c + j] = s.C[i * n + j]
    for (let j = 0; j < m; j++) P[(n + i) * c + n + j] = s.D[i * m + j]
  }
  return P
}

function frobenius(s: System): number {
  let q = 0
  for (const a of [s.A, s.B, s.C, s.D]) for (let i = 0; i < a.length; i++) q += a[i] * a[i]
  return Math.sqrt(q)
}

/** Numerical rank of P(s) at a real s (singular values above tol·max(1, ‖S‖)). */
export function pencilRank(A: Float64Array, B: Float64Array, C: Float64Array, D: Float64Array, n: number, m: number, p: number, at: number, tol = ZERO_RANK_TOL): number {
  const s = { A, B, C, D, n, m, p }
  const P = pencilAt(s, at)
  const r = n + p
  const c = n + m
  const scale = Math.max(frobenius(s), Math.abs(at), 1)
  return r >= c ? rightBasis(P, r, c, tol * scale).rank : rightBasis(transpose(P, r, c), c, r, tol * scale).rank
}

/** The invariant zeros of (A n×n, B n×m, C p×n, D p×m), row-major. */
export function systemZeros(A: Float64Array, B: Float64Array, C: Float64Array, D: Float64Array, n: number, m: number, p: number): SystemZeros {
  const s: System = { A, B, C, D, n, m, p }
  for (const [name, a] of [['A', A], ['B', B], ['C', C], ['D', D]] as const) {
    for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i])) throw new LinearAlgebraError(`the matrix ${name} has a non-finite entry`)
  }
  const tol = ZERO_RANK_TOL * Math.max(frobenius(s), 1e-300)
  const f = dual(reduce(dual(reduce(s, tol)), tol))
  if (f.p !== f.m) throw new LinearAlgebraError(`the reduced system pencil is not square (${f.p} outputs, ${f.m} inputs)`)
  let zeros: Eigenvalues
  if (f.n === 0) zeros = { re: new Float64Array(0), im: new Float64Array(0) }
  else if (f.p === 0) zeros = eigenvalues(f.A, f.n)
  else {
    const DinvC = solveMatrix(f.D, f.C, f.p, f.n)
    if (!DinvC) throw new LinearAlgebraError('the reduced feedthrough matrix is singular')
    const Az = Float64Array.from(f.A)
    const BDC = matMul(f.B, DinvC, f.n, f.m, f.n)
    for (let i = 0; i < Az.length; i++) Az[i] -= BDC[i]
    zeros = eigenvalues(Az, f.n)
  }
  // normal rank: the rank at a real s away from the zeros and poles (the largest over a few trial points)
  const trial = [1.2345, -2.71828, 7.389, -0.3183].map((v) => v * Math.max(1, frobenius(s)))
  const normalRank = Math.max(...trial.map((at) => pencilRank(A, B, C, D, n, m, p, at)))
  return { zeros, normalRank, rows: n + p, columns: n + m }
}
