import { describe, expect, it } from 'vitest'
import { luFactor, luSolve, luSolveBlocks } from '../../shared/engine/solvers/lu'

/**
 * The multi-right-hand-side solve the stiff method uses for the sensitivity blocks. Checked by
 * construction (no source): b = A·x for chosen x, so the exact solution is known; the matrix has
 * a zero leading entry, so row pivoting is exercised.
 */
describe('LU solves with several right-hand sides', () => {
  const n = 4
  const A = Float64Array.of(
    0, 2, -1, 3,
    4, 1, 0, -2,
    -1, 5, 2, 1,
    2, -3, 6, 0.5,
  )
  const xs = [[1, -2, 3, 0.5], [-4, 0, 1e-3, 7], [0.25, 1e6, -1, 2]]
  const rhs = (x: number[]): number[] => Array.from({ length: n }, (_, i) => x.reduce((acc, xk, k) => acc + A[i * n + k] * xk, 0))

  it('solves every block of b in place, as luSolve does one at a time', () => {
    const LU = Float64Array.from(A)
    const piv = new Int32Array(n)
    expect(luFactor(LU, n, piv)).toBe(true)
    // two leading values that are not part of any block: left alone
    const b = Float64Array.from([9, 9, ...xs.flatMap(rhs)])
    const one = Float64Array.from(b)
    luSolveBlocks(LU, n, piv, b, 2, xs.length)
    expect(b[0]).toBe(9)
    expect(b[1]).toBe(9)
    xs.forEach((x, k) => {
      luSolve(LU, n, piv, one, 2 + k * n)
      for (let i = 0; i < n; i++) {
        const got = b[2 + k * n + i]
        expect(Math.abs(got - x[i]), `block ${k}, x${i}`).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(x[i])))
        expect(Math.abs(got - one[2 + k * n + i]), `block ${k}, x${i} against luSolve`).toBeLessThanOrEqual(1e-13 * Math.max(1, Math.abs(x[i])))
      }
    })
  })

  it('a single block matches luSolve', () => {
    const LU = Float64Array.from(A)
    const piv = new Int32Array(n)
    luFactor(LU, n, piv)
    const b = Float64Array.from(rhs(xs[0]))
    const c = Float64Array.from(b)
    luSolveBlocks(LU, n, piv, b, 0, 1)
    luSolve(LU, n, piv, c, 0)
    for (let i = 0; i < n; i++) expect(Math.abs(b[i] - c[i])).toBeLessThanOrEqual(1e-14 * Math.max(1, Math.abs(c[i])))
  })
})
