import { describe, expect, it } from 'vitest'
import { DP54 } from '../../shared/engine'

describe('Dormand–Prince 5(4) tableau', () => {
  it('b satisfies the 17 order conditions of order 5 and b̂ the 8 of order 4 (but not all of order 5)', () => {
    // Runge–Kutta order conditions by rooted trees, with 1/γ(t) on the right: Hairer, Nørsett &
    // Wanner, Solving ODEs I, 2nd ed. 1993, Sec. II.2, Table 2.2 (written out from memory).
    const s = 7
    const A = (i: number, j: number) => (j < i ? DP54.a[i][j] ?? 0 : 0)
    const dot = (u: number[], v: number[]) => u.reduce((acc, x, i) => acc + x * v[i], 0)
    const mul = (v: number[]) => Array.from({ length: s }, (_, i) => { let a = 0; for (let j = 0; j < s; j++) a += A(i, j) * v[j]; return a })
    const c = Array.from({ length: s }, (_, i) => { let a = 0; for (let j = 0; j < s; j++) a += A(i, j); return a })
    const pw = (k: number) => c.map((x) => x ** k)
    const times = (u: number[], v: number[]) => u.map((x, i) => x * v[i])
    const one = new Array<number>(s).fill(1)
    const Ac = mul(c)
    const conds = (b: number[]) => [
      [dot(b, one), 1],
      [dot(b, c), 1 / 2],
      [dot(b, pw(2)), 1 / 3], [dot(b, Ac), 1 / 6],
      [dot(b, pw(3)), 1 / 4], [dot(b, times(c, Ac)), 1 / 8], [dot(b, mul(pw(2))), 1 / 12], [dot(b, mul(Ac)), 1 / 24],
      [dot(b, pw(4)), 1 / 5], [dot(b, times(pw(2), Ac)), 1 / 10], [dot(b, times(c, mul(pw(2)))), 1 / 15], [dot(b, times(c, mul(Ac))), 1 / 30],
      [dot(b, times(Ac, Ac)), 1 / 20], [dot(b, mul(pw(3))), 1 / 20], [dot(b, mul(times(c, Ac))), 1 / 40], [dot(b, mul(mul(pw(2)))), 1 / 60],
      [dot(b, mul(mul(Ac))), 1 / 120],
    ].map(([l, r]) => l - r)
    conds([...DP54.b]).forEach((v, k) => expect(Math.abs(v), `condition ${k + 1} (b)`).toBeLessThan(1e-14))
    const ch = conds([...DP54.bhat])
    ch.slice(0, 8).forEach((v, k) => expect(Math.abs(v), `condition ${k + 1} (b̂)`).toBeLessThan(1e-14))
    expect(Math.max(...ch.slice(8).map(Math.abs))).toBeGreaterThan(1e-5)
    // the stored c, the error weights e = b − b̂, and FSAL (b is the last row of a)
    c.forEach((x, i) => expect(Math.abs(x - DP54.c[i])).toBeLessThan(1e-15))
    DP54.e.forEach((x, i) => expect(Math.abs(x - (DP54.b[i] - DP54.bhat[i]))).toBeLessThan(1e-15))
    for (let j = 0; j < 6; j++) expect(DP54.b[j]).toBe(DP54.a[6][j])
    expect(DP54.order).toBe(5)
    expect(DP54.embeddedOrder).toBe(4)
  })
})
