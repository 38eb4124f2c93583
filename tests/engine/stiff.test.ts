import { describe, expect, it } from 'vitest'
import { simulate, StepLimitError, Rosenbrock, RODAS4, type OdeSystem, type SolverLimits } from '../../shared/engine'
import { makeModel } from './helpers/model'

// Van der Pol, scaled stiff form: problem VDPOL of the Test Set for IVP Solvers (F. Mazzia,
// C. Magherini, Univ. Bari, release 2.4, 2008) and Hairer & Wanner, Solving ODEs II, Sec. IV.1,
// eq. (1.5'): y1' = y2, y2' = ((1 − y1²) y2 − y1)/ε, ε = 1e-6, y(0) = (2, 0); reference solution
// at t = 2 from the Test Set's description of VDPOL.
const eps = 1e-6
const vdpRef = [1.706167732170483, -0.8928097010247975]
const vdp = makeModel({
  title: 'vdpol',
  states: [{ name: 'y1', initial: 2 }, { name: 'y2', initial: 0 }],
  rhs: (_t, y, _p, _u, o) => { o[0] = y[1]; o[1] = ((1 - y[0] * y[0]) * y[1] - y[0]) / eps },
  dfdx: (_t, y, _p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = (-2 * y[0] * y[1] - 1) / eps; o[3] = (1 - y[0] * y[0]) / eps },
})

describe('stiff integration', () => {
  it('VDPOL at rtol = atol = 1e-8: stiff and auto match the reference within 1e-5 relative; auto switches; rk45 needs > 50× the steps', () => {
    const tOut = Float64Array.from([2])
    const stiff = simulate(vdp, { tOut, solver: 'stiff', rtol: 1e-8, atol: 1e-8, maxSteps: 1e6 })
    const auto = simulate(vdp, { tOut, solver: 'auto', rtol: 1e-8, atol: 1e-8, maxSteps: 1e6 })
    for (const r of [stiff, auto]) {
      for (let i = 0; i < 2; i++) expect(Math.abs(r.x[i] - vdpRef[i]) / Math.abs(vdpRef[i]), `${r.stats.method} y${i + 1}`).toBeLessThan(1e-5)
    }
    expect(auto.stats.switched).toBe(true)
    expect(auto.stats.method).toMatch(/switched to stiff/)
    // the next call on the same (cached) solver with nothing to integrate reports no switch
    const idle = simulate(vdp, { tOut: Float64Array.of(0), solver: 'auto', rtol: 1e-8, atol: 1e-8 })
    expect(idle.stats.switched).toBe(false)
    expect(idle.stats.method).toBe('auto (rk45)')
    expect(idle.stats.steps).toBe(0)
    expect(stiff.stats.jacEvals).toBeGreaterThan(0)
    expect(stiff.stats.luDecomps).toBeGreaterThanOrEqual(stiff.stats.steps)
    // rk45 with its step limit raised to 50× the stiff method's steps still does not reach t = 2
    const limit = 50 * stiff.stats.steps
    let err: unknown = null
    try {
      simulate(vdp, { tOut, solver: 'rk45', rtol: 1e-8, atol: 1e-8, maxSteps: limit })
    } catch (e) {
      err = e
    }
    expect(err).toBeInstanceOf(StepLimitError)
    expect((err as StepLimitError).t).toBeLessThan(2)
  })

  it('RODAS4 coefficients satisfy the Rosenbrock order conditions up to order 4 (y₁) and 3 (ŷ₁)', () => {
    // Order conditions of Rosenbrock methods with the exact Jacobian: Hairer & Wanner, Solving ODEs
    // II, 2nd ed., Sec. IV.7, Table 7.1 (written out from memory), with β_ij = α_ij + γ_ij (j < i).
    // The method is stored in the transformed form of eq. (7.3'): Γ⁻¹ = diag(1/γ) − C, α = AΓ,
    // b = mΓ, b̂ = (m − e)Γ. The 16-digit coefficients satisfy the conditions to rounding.
    const s = 6
    const g = RODAS4.gamma
    const Gi = Array.from({ length: s }, (_, i) => Array.from({ length: s }, (_, j) => (i === j ? 1 / g : j < i ? -RODAS4.c[i][j] : 0)))
    const G = Array.from({ length: s }, () => new Array<number>(s).fill(0))
    for (let col = 0; col < s; col++) {
      for (let i = 0; i < s; i++) {
        let v = i === col ? 1 : 0
        for (let j = 0; j < i; j++) v -= Gi[i][j] * G[j][col]
        G[i][col] = v / Gi[i][i]
      }
    }
    const A = (i: number, j: number) => (j < i ? RODAS4.a[i][j] ?? 0 : 0)
    const al = (i: number, j: number) => { let v = 0; for (let k = 0; k < s; k++) v += A(i, k) * G[k][j]; return v }
    const be = (i: number, j: number) => (j < i ? al(i, j) + G[i][j] : 0)
    const sum = (f: (i: number) => number) => { let v = 0; for (let i = 0; i < s; i++) v += f(i); return v }
    const ai = (i: number) => sum((j) => al(i, j))
    const bi = (i: number) => sum((j) => be(i, j))
    const weights = (m: readonly number[]) => Array.from({ length: s }, (_, j) => sum((i) => m[i] * G[i][j]))
    const conditions = (b: number[]) => [
      sum((i) => b[i]) - 1,
      sum((i) => b[i] * bi(i)) - (1 / 2 - g),
      sum((i) => b[i] * ai(i) ** 2) - 1 / 3,
      sum((i) => b[i] * sum((j) => be(i, j) * bi(j))) - (1 / 6 - g + g * g),
      sum((i) => b[i] * ai(i) ** 3) - 1 / 4,
      sum((i) => b[i] * ai(i) * sum((j) => al(i, j) * bi(j))) - (1 / 8 - g / 3),
      sum((i) => b[i] * sum((j) => be(i, j) * ai(j) ** 2)) - (1 / 12 - g / 3),
      sum((i) => b[i] * sum((j) => be(i, j) * sum((k) => be(j, k) * bi(k)))) - (1 / 24 - g / 2 + 1.5 * g * g - g ** 3),
    ]
    const b = weights(RODAS4.m)
    conditions(b).forEach((v, k) => expect(Math.abs(v), `condition ${k + 1} (b)`).toBeLessThan(1e-12))
    const bh = weights(RODAS4.m.map((v, i) => v - RODAS4.e[i]))
    const ch = conditions(bh)
    ch.slice(0, 4).forEach((v, k) => expect(Math.abs(v), `condition ${k + 1} (b̂)`).toBeLessThan(1e-12))
    expect(Math.max(...ch.slice(4).map(Math.abs))).toBeGreaterThan(1e-4)
    // the stored α_i and γ_i are the row sums of α and Γ
    for (let i = 0; i < s; i++) {
      expect(Math.abs(ai(i) - RODAS4.alpha[i]), `α_${i + 1}`).toBeLessThan(1e-12)
      expect(Math.abs(sum((j) => G[i][j]) - RODAS4.gammaSum[i]), `γ_${i + 1}`).toBeLessThan(1e-12)
    }
  })

  it('observed order of convergence ≈ 4 for states and sensitivities on a problem with a known solution', () => {
    // x' = −k (x − sin t) + cos t, x(0) = x0: x = sin t + x0 e^{−kt} (direct substitution, no source);
    // s = ∂x/∂k obeys s' = −k s − (x − sin t), s(0) = 0: s = −t x0 e^{−kt}. The sensitivity block's
    // coupling ∂(−k s − (x − sin t))/∂x = −1 and its ∂/∂t = cos t (by hand).
    const k = 2
    const x0 = 1
    let tAt = 0
    const sys: OdeSystem = {
      n: 2,
      nBlock: 1,
      f: (t, z, dz) => { dz[0] = -k * (z[0] - Math.sin(t)) + Math.cos(t); dz[1] = -k * z[1] - (z[0] - Math.sin(t)) },
      jac: (t, _z, J, ft) => { J[0] = -k; ft[0] = k * Math.cos(t) - Math.sin(t) },
      coupleAt: (t) => { tAt = t },
      couple: (v, vt, out) => { out[1] += -v[0] + Math.cos(tAt) * vt },
    }
    const T = 2
    const errs: number[][] = []
    for (const h of [0.1, 0.05, 0.025, 0.0125]) {
      const ros = new Rosenbrock()
      const limits: SolverLimits = { maxSteps: 1e6, deadline: Infinity, budgetMs: 0, signal: null, stateNames: ['x'], fixedStep: h }
      ros.start(sys, { rtol: Float64Array.of(1e-6), atol: Float64Array.of(1e-6), weight: Float64Array.of(1, 1) }, limits, 0, Float64Array.of(x0, 0), h)
      ros.advance(T, null)
      errs.push([Math.abs(ros.z[0] - (Math.sin(T) + x0 * Math.exp(-k * T))), Math.abs(ros.z[1] - -T * x0 * Math.exp(-k * T))])
    }
    for (let c = 0; c < 2; c++) {
      for (let i = 1; i < errs.length; i++) {
        const order = Math.log2(errs[i - 1][c] / errs[i][c])
        expect(order, `component ${c}, refinement ${i}`).toBeGreaterThan(3.6)
        expect(order).toBeLessThan(4.5)
      }
    }
  })

  it('stiff linear decay x\' = −1e4 (x − cos t): the stiff method takes far fewer steps than rk45', () => {
    // Prothero–Robinson type problem (Hairer & Wanner II, Sec. IV.15, eq. (15.1)): x = cos t exactly.
    const L = 1e4
    const pr = makeModel({
      title: 'prothero-robinson',
      states: [{ name: 'x', initial: 1 }],
      rhs: (t, x, _p, _u, o) => { o[0] = -L * (x[0] - Math.cos(t)) - Math.sin(t) },
      dfdx: (_t, _x, _p, _u, o) => { o[0] = -L },
      dfdt: (t, _x, _p, _u, o) => { o[0] = -L * Math.sin(t) - Math.cos(t) },
    })
    // end values (each time as the end of its own run): between steps RODAS4's dense output of order 3
    // shows order reduction on this problem (docs/engine.md, "Dense output")
    const runs = [1, 5, 10].map((tEnd) => simulate(pr, { tOut: Float64Array.of(tEnd), solver: 'stiff', rtol: 1e-6, atol: 1e-9 }))
    runs.forEach((r, i) => expect(Math.abs(r.x[0] - Math.cos([1, 5, 10][i]))).toBeLessThan(1e-5))
    const s = runs[2]
    const e = simulate(pr, { tOut: Float64Array.of(10), solver: 'rk45', rtol: 1e-6, atol: 1e-9 })
    expect(e.stats.steps).toBeGreaterThan(20 * s.stats.steps)
  })
})
