import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { simulate } from '../../shared/engine'
import { checkModel, compileModel } from '../../shared/sheet/index'
import { analytic, centralDifferences, defaultPoint, errors, maxRelDiff, MODELS_DIR } from './helpers'

const cells = readFileSync(join(MODELS_DIR, 'heat-exchanger-cells.sheet'), 'utf8')
const withN = (n: number) => cells.replace(/const {2}N = \d+ \[1\]/, `const  N = ${n} [1]`)

/** the outlet temperatures [degC] of the N-cell sheet at its steady state */
function outlets(n: number): { hot: number; cold: number } {
  const m = compileModel(withN(n))
  const r = simulate(m, { tOut: Float64Array.of(0), rtol: 1e-10, atol: 1e-10 })
  const hot = m.outputs.findIndex((o) => o.name === 'hot_out')
  const cold = m.outputs.findIndex((o) => o.name === 'cold_out')
  const k2c = (v: number) => v - 273.15
  return { hot: k2c(r.y[hot]), cold: k2c(r.y[cold]) }
}

describe('indexed states and lets', () => {
  it('expand into the same equations as the hand-written flat sheet', () => {
    // the shipped 3 + 3 cell template, written flat, against the indexed template with N = 3
    const flat = compileModel(readFileSync(join(MODELS_DIR, 'counterflow-heat-exchanger.sheet'), 'utf8'))
    const idx = compileModel(withN(3))
    expect(idx.nx).toBe(6)
    const order = ['Th[1]', 'Th[2]', 'Th[3]', 'Tc[1]', 'Tc[2]', 'Tc[3]']
    expect(idx.states.map((s) => s.name)).toEqual(order)
    const pf = defaultPoint(flat), pi = defaultPoint(idx)
    const x = Float64Array.of(340, 330, 320, 315, 305, 295)
    pf.x.set(x); pi.x.set(x)
    const ff = new Float64Array(6), fi = new Float64Array(6)
    flat.rhs(0, pf.x, pf.p, pf.u, ff)
    idx.rhs(0, pi.x, pi.p, pi.u, fi)
    for (let i = 0; i < 6; i++) expect(fi[i]).toBeCloseTo(ff[i], 12)
    const jf = analytic(flat, pf, 'x', 'f'), ji = analytic(idx, pi, 'x', 'f')
    expect(maxRelDiff(jf, ji, 1e-12)).toBeLessThan(1e-14)
  })

  it('exact Jacobians of the expanded sheet agree with finite differences', () => {
    const c = compileModel(withN(8))
    const pt = defaultPoint(c)
    pt.x.forEach((_, i) => (pt.x[i] = 300 + 3 * i))
    for (const w of ['x', 'p', 'u'] as const) {
      expect(maxRelDiff(analytic(c, pt, w, 'f'), centralDifferences(c, pt, w, 'f'), 1e-6)).toBeLessThan(1e-6)
      expect(maxRelDiff(analytic(c, pt, w, 'g'), centralDifferences(c, pt, w, 'g'), 1e-6)).toBeLessThan(1e-6)
    }
  })

  it('20 cells reach the effectiveness-NTU outlet temperatures within the first-order discretisation error', () => {
    // Counterflow effectiveness: eps = (1 - exp(-NTU (1 - Cr))) / (1 - Cr exp(-NTU (1 - Cr))),
    // NTU = UA / Cmin, Cr = Cmin / Cmax (Incropera & DeWitt, Fundamentals of Heat and Mass
    // Transfer, 6th ed., Eq. 11.29a / Table 11.3).
    const Ch = 1.5 * 4000, Cc = 1.5 * 3900, UA = 12e3
    const Cmin = Math.min(Ch, Cc), Cr = Cmin / Math.max(Ch, Cc), NTU = UA / Cmin
    const eps = (1 - Math.exp(-NTU * (1 - Cr))) / (1 - Cr * Math.exp(-NTU * (1 - Cr)))
    const q = eps * Cmin * (85 - 10)
    const exact = { hot: 85 - q / Ch, cold: 10 + q / Cc }
    const err = [10, 20, 40].map((n) => { const o = outlets(n); return Math.abs(o.hot - exact.hot) + Math.abs(o.cold - exact.cold) })
    // mixed cells in series are an upwind (first-order) discretisation: the error halves when
    // N doubles; observed order log2(e_N / e_2N) within [0.85, 1.15]
    const order1 = Math.log2(err[0] / err[1]), order2 = Math.log2(err[1] / err[2])
    expect(order1).toBeGreaterThan(0.85); expect(order1).toBeLessThan(1.15)
    expect(order2).toBeGreaterThan(0.85); expect(order2).toBeLessThan(1.15)
    // the error at N = 20 is the first-order term C/N: Richardson extrapolation from N = 20 and
    // N = 40 (2·T_40 − T_20) removes it and lands on the effectiveness-NTU outlets
    const o20 = outlets(20), o40 = outlets(40)
    expect(Math.abs(o20.hot - exact.hot)).toBeLessThan(2)
    expect(Math.abs(2 * o40.hot - o20.hot - exact.hot)).toBeLessThan(0.05)
    expect(Math.abs(2 * o40.cold - o20.cold - exact.cold)).toBeLessThan(0.05)
    // energy balance of the cells holds exactly: duty = Ch (Th_in - Th_out) = Cc (Tc_out - Tc_in)
    expect(Ch * (85 - o20.hot)).toBeCloseTo(Cc * (o20.cold - 10), 4)
  })

  it('sum and prod run over a range; index arithmetic and consts size the ranges', () => {
    const c = compileModel([
      'const N = 4 [1]', 'const M = 2 [1]',
      'state x[1..N+M] = 1', 'let w[i in 1..N+M] = i * x[i]',
      "dx[i in 1..N+M]/dt = -x[i]",
      'output s = sum(i in 1..N+M, w[i])', 'output r = prod(k in 2..3, x[k] + k)',
    ].join('\n'))
    expect(c.nx).toBe(6)
    const pt = defaultPoint(c)
    const y = new Float64Array(2)
    c.outputsFn(0, pt.x, pt.p, pt.u, y)
    expect(y[0]).toBe(21) // 1 + 2 + … + 6
    expect(y[1]).toBe(12) // (1 + 2)(1 + 3)
  })

  it('reports index mistakes with their place', () => {
    const base = 'const N = 3 [1]\nstate x[1..N] = 1 [m]\n'
    expect(errors(base + "dx[i in 1..N]/dt = -x[i-1]")[0].message).toBe('index 0 is outside x[1..3]')
    const e1 = errors(base + "dx[i in 1..N]/dt = (x[i+1] - x[i]) / 1")
    expect(e1[0].message).toBe('index 4 is outside x[1..3]')
    expect(e1[0].line).toBe(3)
    expect(e1.length).toBe(1) // once per statement, not once per index
    expect(errors(base + "dx[i in 1..N]/dt = x * 0")[0].message).toMatch(/x is indexed over 1..3: write x\[i\]/)
    expect(errors(base + "dx[i in 1..N]/dt = x[i/2]")[0].message).toMatch(/whole number/)
    expect(errors(base + "dx[i in 1..N]/dt = x[t]")[0].message).toMatch(/an index must be computed/)
    expect(errors('state x[1..K] = 1 [m]\nx[1]\' = 0').some((d) => /unknown name 'K' in an index bound/.test(d.message))).toBe(true)
    expect(errors("const N = 2.5 [1]\nstate x[1..N] = 1\ndx[1]/dt = 0").some((d) => /const N = 2.5 is not a whole number/.test(d.message))).toBe(true)
    expect(errors("const N = 3 [1]\nstate x[1..N] = 1 [m]\ndx[i in 1..2]/dt = 0")[0].message).toBe("state x[3] has no derivative: add dx[3]/dt = …")
    expect(checkModel("const N = 3 [1]\nconst tau = 2 [s]\nstate x[1..N] = 1 [m]\ndx[i in 1..N]/dt = -x[i] / tau").ok).toBe(true)
    expect(errors("const N = 3 [1]\nstate x[1..N] = 1 [m]\ndx[i in 1..N]/dt = -x[i]")[0].message).toBe("unit mismatch: the left side dx[1]/dt is in m/s (x[1] in m, per s), the right side in m")
  })
})
