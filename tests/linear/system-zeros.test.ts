// Zeros of a whole multivariable system (the Rosenbrock pencil), against textbook transfer matrices,
// an independent determinant, the per-pair zeros of single-input single-output systems, and a sheet.
import { describe, expect, it } from 'vitest'
import { det, eigs, matrix, multiply, inv, subtract } from 'mathjs'
import { compileModel } from '../../shared/sheet/index'
import { analyzeModel, channelZeros, pencilRank, resolveValues, systemZeros } from '../../shared/engine/linear/index'
import { LINEAR, LINEAR_A, LINEAR_B, LINEAR_C, LINEAR_D } from './sheets'
// seeded uniform generator, synthetic test data only
import { mulberry32 as rng } from '../../shared/engine/random'

const F = (a: number[]) => Float64Array.from(a)

/** the system matrix [A − sI, B; C, D] as nested arrays (square systems), for mathjs */
function pencil(A: number[][], B: number[][], C: number[][], D: number[][], s: number): number[][] {
  return [...A.map((r, i) => [...r.map((v, j) => v - (i === j ? s : 0)), ...B[i]]), ...C.map((r, i) => [...r, ...D[i]])]
}

const sorted = (z: { re: Float64Array; im: Float64Array }) => Array.from(z.re, (re, k) => [re, z.im[k]]).sort((a, b) => a[0] - b[0] || a[1] - b[1])

describe('zeros of the whole system', () => {
  it('2×2 plant with feedthrough: G(s) = [[s − 1, 4], [4.5, 2(s − 1)]]/(s + 2) has its zero at s = 4', () => {
    // Skogestad & Postlethwaite, Multivariable Feedback Control, 2nd ed. 2005, Ch. 4 (example of a
    // multivariable right-half-plane zero; the plant and its zero at 4 quoted from memory).
    // Verified here by hand: det G = 2(s − 1)²/(s + 2)² − 18/(s + 2)² = 2(s − 4)(s + 2)/(s + 2)² = 2(s − 4)/(s + 2).
    // Realisation (ours): G = D + c b/(s + 2) with D = diag(1, 2), c b = [[−3, 4], [4.5, −6]] (rank 1).
    const A = [[-2]], B = [[-3, 4]], C = [[1], [-1.5]], D = [[1, 0], [0, 2]]
    const z = systemZeros(F(A.flat()), F(B.flat()), F(C.flat()), F(D.flat()), 1, 2, 2)
    expect(z.zeros.re.length).toBe(1)
    expect(z.zeros.re[0]).toBeCloseTo(4, 12)
    expect(z.zeros.im[0]).toBe(0)
    expect(z.normalRank).toBe(3)
    // independent check (mathjs determinant): the system matrix is singular at s = 4 and not at s = 3
    expect(Math.abs(det(pencil(A, B, C, D, 4)))).toBeLessThan(1e-12)
    expect(Math.abs(det(pencil(A, B, C, D, 3)))).toBeGreaterThan(0.1)
    // no single channel has this zero: g11 = (s − 1)/(s + 2), g22 = 2(s − 1)/(s + 2), g12 and g21 none
    const g11 = channelZeros(F([-2]), F([-3]), F([1]), 1, 1)
    expect(g11.zeros!.re[0]).toBeCloseTo(1, 12)
  })

  it('strictly proper 2×2 plant: a zero at s = 1 that no input–output pair has', () => {
    // Constructed here; the zero derived by hand: G(s) = [[1/(s+1), 2/(s+3)], [1/(s+1), 1/(s+1)]],
    // det G = [(s + 3) − 2(s + 1)]/((s + 1)²(s + 3)) = (1 − s)/((s + 1)²(s + 3)); the realisation below
    // is controllable and observable (order 3 = degree of the pole polynomial), so the invariant zeros
    // are the zeros of det G (Kailath, Linear Systems, 1980, Sec. 6.5): one, at s = 1.
    const A = [[-1, 0, 0], [0, -1, 0], [0, 0, -3]], B = [[1, 0], [0, 1], [0, 1]], C = [[1, 0, 2], [1, 1, 0]], D = [[0, 0], [0, 0]]
    const z = systemZeros(F(A.flat()), F(B.flat()), F(C.flat()), F(D.flat()), 3, 2, 2)
    expect(z.zeros.re.length).toBe(1)
    expect(z.zeros.re[0]).toBeCloseTo(1, 10)
    expect(Math.abs(det(pencil(A, B, C, D, z.zeros.re[0])))).toBeLessThan(1e-10)
    expect(Math.abs(det(pencil(A, B, C, D, 2)))).toBeGreaterThan(0.1)
    // rank drop of the system matrix at the zero, by our own SVD rank: 4 of 5 there, 5 elsewhere
    expect(pencilRank(F(A.flat()), F(B.flat()), F(C.flat()), F(D.flat()), 3, 2, 2, 1)).toBe(4)
    expect(pencilRank(F(A.flat()), F(B.flat()), F(C.flat()), F(D.flat()), 3, 2, 2, 0.5)).toBe(5)
    // each channel is a first-order lag: its per-pair zeros (from the 3-state realisation) are only
    // modes that cancel in that channel (−1, −3), never the system's zero at 1
    for (const [i, j] of [[0, 0], [0, 1], [1, 0], [1, 1]]) {
      const ch = channelZeros(F(A.flat()), F(B.map((r) => r[j])), F(C[i]), 0, 3)
      for (const re of ch.zeros!.re) expect(Math.min(Math.abs(re + 1), Math.abs(re + 3))).toBeLessThan(1e-6)
    }
  })

  it('one input, two outputs: only a zero common to both channels is a zero of the system', () => {
    // Constructed here: y1 = (s+2)/((s+1)(s+3)) u, y2 = (s+2)/((s+1)(s+4)) u share the zero −2 (common
    // practice, no source: a column transfer matrix loses rank only where every entry vanishes).
    // x1 = u/(s+1); (s+2)x1 = x1 + u feeds x2' = −3x2 + x1 + u and x3' = −4x3 + x1 + u.
    const A = F([-1, 0, 0, 1, -3, 0, 1, 0, -4]), B = F([1, 1, 1]), C = F([0, 1, 0, 0, 0, 1]), D = F([0, 0])
    const z = systemZeros(A, B, C, D, 3, 1, 2)
    expect(z.zeros.re.length).toBe(1)
    expect(z.zeros.re[0]).toBeCloseTo(-2, 10)
    expect(z.normalRank).toBe(4)
    expect(pencilRank(A, B, C, D, 3, 1, 2, -2)).toBe(3)
    expect(pencilRank(A, B, C, D, 3, 1, 2, -3.5)).toBe(4)
    // with y2 = x1 + x3 = 2(s + 3)/((s + 1)(s + 4)) u the channels share no zero: the system has none
    const z2 = systemZeros(A, B, F([0, 1, 0, 1, 0, 1]), D, 3, 1, 2)
    expect(z2.zeros.re.length).toBe(0)
  })

  it('single-input single-output systems: the same zeros as the per-pair method (seeded random systems, synthetic)', () => {
    const r = rng(1606)
    for (let trial = 0; trial < 25; trial++) {
      const n = 2 + (trial % 4)
      const A = F(Array.from({ length: n * n }, () => 2 * r() - 1))
      const b = F(Array.from({ length: n }, () => 2 * r() - 1))
      const c = F(Array.from({ length: n }, () => 2 * r() - 1))
      const d = trial % 3 === 0 ? 0.5 + r() : 0
      const ref = channelZeros(A, b, c, d, n)
      const z = systemZeros(A, b, c, F([d]), n, 1, 1)
      expect(z.zeros.re.length).toBe(ref.zeros!.re.length)
      const a1 = sorted(z.zeros), a2 = sorted(ref.zeros!)
      a1.forEach(([re, im], k) => {
        expect(re).toBeCloseTo(a2[k][0], 6)
        expect(im).toBeCloseTo(a2[k][1], 6)
      })
    }
  })

  it('more inputs than outputs, generic: no zeros; a square system with D invertible: eig(A − B D⁻¹ C) (mathjs)', () => {
    // common practice, no source: a generic non-square system has no invariant zeros
    const z = systemZeros(F([-1, 0.3, 0.2, -2]), F([1, 0.5, 0.2, 1]), F([1, 0.7]), F([0, 0]), 2, 2, 1)
    expect(z.zeros.re.length).toBe(0)
    // the two-state linear sheet: D = diag(0.1, 0.3) is invertible, so its zeros are eig(A − B D⁻¹ C)
    // (Emami-Naeini & Van Dooren, Automatica 18 (1982), Sec. 2), computed independently by mathjs
    const m = compileModel(LINEAR)
    const v = resolveValues(m, {})
    const a = analyzeModel(m, { p: v.p, u: v.u, at: 'steady', provenance: v.provenance, frequencies: 0, steps: false })
    const ref = eigs(matrix(subtract(LINEAR_A, multiply(multiply(LINEAR_B, inv(LINEAR_D)), LINEAR_C)) as number[][])).values.valueOf() as number[]
    const got = a.systemZeros!.zeros.map((c) => c.re).sort((x, y) => x - y)
    expect(a.systemZeros!.zeros.every((c) => c.im === 0)).toBe(true)
    expect(got).toHaveLength(2)
    ref.sort((x, y) => x - y).forEach((re, k) => expect(got[k]).toBeCloseTo(re, 9))
    expect(a.systemZeros!.normalRank).toBe(4)
  })
})
