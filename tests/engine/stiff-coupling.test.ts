/**
 * The sensitivities' coupling term on the stiff path: the sheet compiler's d2f (the second
 * directional derivative D_v D_w f, shared/sheet/coupling-codegen.ts) and what the stiff method
 * does with it. Each check would fail with the coupling left out (shown with d2f ≡ 0).
 */
import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import type { CompiledModel } from '../../shared/sheet/compiled'
import { simulate, Rosenbrock, type SolverLimits } from '../../shared/engine'
import { ModelSystem } from '../../shared/engine/system'
import { InputSet } from '../../shared/engine/inputs'

const sheet = (path: string) => compileModel(readFileSync(new URL(path, import.meta.url), 'utf8'))
// Robertson's kinetics and VDPOL (ε = 1e-6): problems ROBER and VDPOL of the Test Set for IVP
// Solvers (F. Mazzia & C. Magherini, Univ. Bari, release 2.4, 2008), written as sheets
const robertson = sheet('./fixtures/robertson.sheet')
const vdpol = sheet('./fixtures/vdpol.sheet')
// lets, a lookup, max(), sqrt, four inputs and a delayed read: a shipped template
const vessel = sheet('../../models/heated-buffer-vessel.sheet')
// lets with pow(…, 1.5): the Arenstorf orbit (Hairer, Nørsett & Wanner I, Sec. II.0)
const arenstorf = sheet('./fixtures/arenstorf.sheet')

/** the same model with its coupling term left out (both forms: per sensitivity and all at once) */
const uncoupled = (m: CompiledModel): CompiledModel => ({ ...m, d2f: (_t, _x, _p, _u, out) => { for (let i = 0; i < m.nx; i++) out[i] = 0 }, d2fs: undefined })

/** seeded synthetic numbers in [−1, 1) (a linear congruential generator; Numerical Recipes, 3rd ed., Sec. 7.1) */
function lcg(seed: number): () => number {
  let s = seed >>> 0
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0
    return s / 2 ** 31 - 1
  }
}

/**
 * D_v D_w f by a central difference (common practice, no source) of the compiler's own first
 * derivatives: D_w f = ∂f/∂x·s + ∂f/∂p·q + ∂f/∂u·r, moved along (v, τ, ν) in (x, t, u).
 */
function fdCoupling(m: CompiledModel, t: number, X: Float64Array, P: Float64Array, U: Float64Array): Float64Array {
  const { nx, np } = m
  const nuu = m.nu + m.nd
  const J = new Float64Array(nx * nx)
  const Fp = new Float64Array(Math.max(1, nx * np))
  const Fu = new Float64Array(Math.max(1, nx * nuu))
  const p = P.subarray(0, np)
  const dw = (h: number): Float64Array => {
    const x = Float64Array.from({ length: nx }, (_, i) => X[i] + h * X[2 * nx + i])
    const u = Float64Array.from({ length: Math.max(1, nuu) }, (_, k) => (k < nuu ? U[k] + h * U[2 * nuu + k] : 0))
    const th = t + h * X[3 * nx]
    m.dfdx(th, x, p, u, J)
    m.dfdp(th, x, p, u, Fp)
    m.dfdu(th, x, p, u, Fu)
    return Float64Array.from({ length: nx }, (_, i) => {
      let a = 0
      for (let k = 0; k < nx; k++) a += J[i * nx + k] * X[nx + k]
      for (let k = 0; k < np; k++) a += Fp[i * np + k] * P[np + k]
      for (let k = 0; k < nuu; k++) a += Fu[i * nuu + k] * U[nuu + k]
      return a
    })
  }
  const h = 1e-6
  const a = dw(h)
  const b = dw(-h)
  return a.map((v, i) => (v - b[i]) / (2 * h))
}

describe('the generated coupling term d2f', () => {
  const cases: { name: string; m: CompiledModel; x: number[]; u: number[]; t: number }[] = [
    { name: 'heated buffer vessel (template)', m: vessel, x: [0.8, 300], u: [2e-3, 288, 1500, 0.7, 290], t: 30 },
    { name: 'Arenstorf orbit (fixture)', m: arenstorf, x: [0.994, 0.1, 0.2, -2.0], u: [], t: 1 },
    { name: 'Robertson kinetics (fixture)', m: robertson, x: [0.9, 2e-5, 0.1], u: [], t: 1 },
  ]
  for (const c of cases) {
    it(`${c.name}: equals a central difference of the generated Jacobians at 20 seeded directions`, () => {
      const { m } = c
      const { nx, np } = m
      const nuu = m.nu + m.nd
      const rnd = lcg(12345)
      for (let trial = 0; trial < 20; trial++) {
        // directions scaled like the values they move (seeded synthetic)
        const X = new Float64Array(3 * nx + 1)
        c.x.forEach((v, i) => { X[i] = v; X[nx + i] = rnd() * (Math.abs(v) + 1e-3); X[2 * nx + i] = rnd() * 1e-2 * (Math.abs(v) + 1e-3) })
        X[3 * nx] = trial % 2 === 0 ? rnd() : 0
        const P = new Float64Array(2 * np)
        m.params.forEach((q, k) => { P[k] = q.value; P[np + k] = rnd() * Math.abs(q.value) })
        const U = new Float64Array(Math.max(1, 3 * nuu))
        c.u.forEach((v, k) => { U[k] = v; U[nuu + k] = rnd() * Math.abs(v) * 1e-2; U[2 * nuu + k] = rnd() * Math.abs(v) * 1e-3 })
        const out = new Float64Array(nx)
        m.d2f(c.t, X, P, U, out)
        const ref = fdCoupling(m, c.t, X, P, U)
        const scale = Math.max(...ref.map(Math.abs))
        expect(scale, 'the check must see a non-zero coupling').toBeGreaterThan(0)
        for (let i = 0; i < nx; i++) expect(Math.abs(out[i] - ref[i]), `trial ${trial}, component ${i}`).toBeLessThan(1e-5 * scale)
      }
    })

    it(`${c.name}: dfs (the sensitivities' right-hand sides in one call) equals ∂f/∂x·s + ∂f/∂p·q + ∂f/∂u·r from the generated Jacobians`, () => {
      const { m } = c
      const { nx, np } = m
      const nuu = m.nu + m.nd
      const ns = 3
      const rnd = lcg(4242)
      expect(m.dfs, 'the compiler generates dfs').toBeTypeOf('function')
      const J = new Float64Array(nx * nx)
      const Fp = new Float64Array(Math.max(1, nx * np))
      const Fu = new Float64Array(Math.max(1, nx * nuu))
      for (let trial = 0; trial < 10; trial++) {
        // seeded synthetic point and directions: z = [x, s_1, s_2, s_3], q_j, r_j
        const z = new Float64Array(nx * (1 + ns))
        c.x.forEach((v, i) => { z[i] = v; for (let j = 1; j <= ns; j++) z[j * nx + i] = rnd() * (Math.abs(v) + 1e-3) })
        const Pall = new Float64Array(np * (1 + ns))
        m.params.forEach((q, k) => { Pall[k] = q.value; for (let j = 1; j <= ns; j++) Pall[j * np + k] = rnd() * Math.abs(q.value) })
        const Uall = new Float64Array(Math.max(1, nuu * (2 + ns)))
        c.u.forEach((u, k) => { Uall[k] = u; for (let j = 0; j < ns; j++) Uall[(j + 2) * nuu + k] = rnd() * Math.abs(u) * 1e-2 })
        const out = new Float64Array(nx * (1 + ns)).fill(7)
        m.dfs!(c.t, z, Pall, Uall, ns, out)
        for (let i = 0; i < nx; i++) expect(out[i], 'the state block is left alone').toBe(7)
        const p = Pall.subarray(0, np)
        const u = Uall.subarray(0, Math.max(1, nuu))
        m.dfdx(c.t, z, p, u, J)
        m.dfdp(c.t, z, p, u, Fp)
        m.dfdu(c.t, z, p, u, Fu)
        for (let j = 0; j < ns; j++) {
          for (let i = 0; i < nx; i++) {
            let ref = 0
            let size = 0
            const terms: number[] = []
            for (let k = 0; k < nx; k++) terms.push(J[i * nx + k] * z[(j + 1) * nx + k])
            for (let k = 0; k < np; k++) terms.push(Fp[i * np + k] * Pall[(j + 1) * np + k])
            for (let k = 0; k < nuu; k++) terms.push(Fu[i * nuu + k] * Uall[(j + 2) * nuu + k])
            for (const v of terms) { ref += v; size += Math.abs(v) }
            expect(Math.abs(out[(j + 1) * nx + i] - ref), `trial ${trial}, sensitivity ${j}, component ${i}`).toBeLessThanOrEqual(1e-13 * size + 1e-300)
          }
        }
      }
    })

    it(`${c.name}: d2fs (all sensitivities in one call) adds what d2f gives for each, at 10 seeded points`, () => {
      const { m } = c
      const { nx, np } = m
      const nuu = m.nu + m.nd
      const ns = 3
      const rnd = lcg(777)
      expect(m.d2fs, 'the compiler generates d2fs').toBeTypeOf('function')
      for (let trial = 0; trial < 10; trial++) {
        // seeded synthetic point and directions: z = [x, s_1, s_2, s_3], q_j, r_j, v, τ, ν
        const z = new Float64Array(nx * (1 + ns))
        c.x.forEach((v, i) => { z[i] = v; for (let j = 1; j <= ns; j++) z[j * nx + i] = rnd() * (Math.abs(v) + 1e-3) })
        const v = Float64Array.from(c.x, (x) => rnd() * 1e-2 * (Math.abs(x) + 1e-3))
        const vt = trial % 2 === 0 ? rnd() : 0
        const Pall = new Float64Array(np * (1 + ns))
        m.params.forEach((q, k) => { Pall[k] = q.value; for (let j = 1; j <= ns; j++) Pall[j * np + k] = rnd() * Math.abs(q.value) })
        const Uall = new Float64Array(Math.max(1, nuu * (2 + ns)))
        c.u.forEach((u, k) => { Uall[k] = u; Uall[nuu + k] = rnd() * Math.abs(u) * 1e-3; for (let j = 0; j < ns; j++) Uall[(j + 2) * nuu + k] = rnd() * Math.abs(u) * 1e-2 })
        const base = Float64Array.from({ length: nx * (1 + ns) }, () => rnd())
        const out = Float64Array.from(base)
        m.d2fs!(c.t, z, Pall, Uall, v, vt, ns, out)
        for (let i = 0; i < nx; i++) expect(out[i], 'the state block is left alone').toBe(base[i])
        for (let j = 0; j < ns; j++) {
          const X = new Float64Array(3 * nx + 1)
          for (let i = 0; i < nx; i++) { X[i] = z[i]; X[nx + i] = z[(j + 1) * nx + i]; X[2 * nx + i] = v[i] }
          X[3 * nx] = vt
          const P = new Float64Array(2 * np)
          for (let k = 0; k < np; k++) { P[k] = Pall[k]; P[np + k] = Pall[(j + 1) * np + k] }
          const U = new Float64Array(Math.max(1, 3 * nuu))
          for (let k = 0; k < nuu; k++) { U[k] = Uall[k]; U[nuu + k] = Uall[(j + 2) * nuu + k]; U[2 * nuu + k] = Uall[nuu + k] }
          const one = new Float64Array(nx)
          m.d2f(c.t, X, P, U, one)
          for (let i = 0; i < nx; i++) {
            const got = out[(j + 1) * nx + i] - base[(j + 1) * nx + i]
            expect(Math.abs(got - one[i]), `trial ${trial}, sensitivity ${j}, component ${i}`).toBeLessThanOrEqual(1e-12 * (Math.abs(one[i]) + Math.abs(base[(j + 1) * nx + i])) + 1e-300)
          }
        }
      }
    })
  }
})

describe('stiff path: sensitivities with the exact coupling', () => {
  /** one fixed-step RODAS4 run of Robertson to t = 0.2 (100 steps of 2e-3): states, then ∂x/∂k_j (j = 0, 1, 2) */
  function fixedRun(m: CompiledModel, k: number[], withSens: boolean): Float64Array {
    const h = 2e-3
    const sens = withSens ? [0, 1, 2].map((j) => ({ param: j, state: -1, delaySlots: [] })) : []
    const sys = new ModelSystem(m, sens)
    sys.p.set(k)
    const inputs = new InputSet(m, undefined)
    inputs.prepare(m, sys.p, 0, 0.2)
    sys.inputs = inputs
    const ros = new Rosenbrock()
    const limits: SolverLimits = { maxSteps: 1e6, deadline: Infinity, budgetMs: 0, signal: null, stateNames: ['y1', 'y2', 'y3'], fixedStep: h }
    const tol = { rtol: new Float64Array(3).fill(1e-6), atol: new Float64Array(3).fill(1e-10), weight: new Float64Array(sys.n).fill(1) }
    const z0 = new Float64Array(sys.n)
    z0[0] = 1
    ros.start(sys, tol, limits, 0, z0, h)
    ros.advance(0.2, null)
    return Float64Array.from(ros.z)
  }

  it('with fixed steps the sensitivities are the exact derivatives of the computed states (Robertson, 100 steps)', () => {
    // differentiating the method's stage equations by k_j gives exactly the sensitivity stages when
    // the coupling is exact (rosenbrock.ts, "Error control of the sensitivities"); checked against
    // central differences of the computed states (relative step 1e-6; common practice, no source),
    // each k_j·∂y_i/∂k_j against its own size plus the differences' rounding, 1e-8
    const k = [0.04, 3e7, 1e4]
    const deviation = (m: CompiledModel): number => {
      const z = fixedRun(m, k, true)
      let worst = 0
      for (let j = 0; j < 3; j++) {
        const dk = k[j] * 1e-6
        const up = fixedRun(m, k.map((v, q) => (q === j ? v + dk : v)), false)
        const dn = fixedRun(m, k.map((v, q) => (q === j ? v - dk : v)), false)
        for (let i = 0; i < 3; i++) {
          const fd = (up[i] - dn[i]) / (2 * dk)
          worst = Math.max(worst, (k[j] * Math.abs(z[3 * (j + 1) + i] - fd)) / (k[j] * Math.abs(fd) + 1e-8))
        }
      }
      return worst
    }
    expect(deviation(robertson)).toBeLessThan(1e-5)
    expect(deviation(uncoupled(robertson))).toBeGreaterThan(1e-3)
  })

  it('Robertson at rtol 1e-10: ∂y/∂k_j at 8 times agree with central differences of restarted runs at rtol 1e-12', () => {
    const tOut = Float64Array.of(4e-4, 0.04, 0.4, 4, 40, 400, 4e4, 4e6)
    const k = [0.04, 3e7, 1e4]
    const req = { tOut, solver: 'stiff' as const, rtol: 1e-10, atol: 1e-16, maxSteps: 1e6, sensitivities: { params: [0, 1, 2], initialStates: [] } }
    const fd: number[][][] = [0, 1, 2].map((j) => Array.from(tOut, (t) => {
      const dk = k[j] * 1e-5
      const at = (d: number) => simulate(robertson, { tOut: Float64Array.of(t), p: Float64Array.from(k, (v, q) => (q === j ? v + d : v)), solver: 'stiff', rtol: 1e-12, atol: 1e-20, maxSteps: 1e6 }).x
      const up = at(dk)
      const dn = at(-dk)
      return [0, 1, 2].map((i) => (up[i] - dn[i]) / (2 * dk))
    }))
    // k_j·∂y_i/∂k_j against its own size plus 1e-3·|y_i| (the differences' own error on the tiny
    // ∂y/∂k2, ∂y/∂k3 is about 1e-4 of them)
    const y = simulate(robertson, { tOut, solver: 'stiff', rtol: 1e-12, atol: 1e-20, maxSteps: 1e6 }).x
    const worst = (m: CompiledModel): number => {
      const r = simulate(m, req)
      let w = 0
      for (let j = 0; j < 3; j++) {
        for (let q = 0; q < tOut.length; q++) {
          // dx layout: time, then state, then sensitivity
          for (let i = 0; i < 3; i++) w = Math.max(w, (k[j] * Math.abs(r.dx![(q * 3 + i) * 3 + j] - fd[j][q][i])) / (k[j] * Math.abs(fd[j][q][i]) + 1e-3 * Math.abs(y[q * 3 + i])))
        }
      }
      return w
    }
    expect(worst(robertson)).toBeLessThan(1e-5)
    expect(worst(uncoupled(robertson))).toBeGreaterThan(1e-3)
  })

  it('sensitivities cost at most 1.5× the steps of the states alone at rtol 1e-8 (Robertson, VDPOL)', () => {
    const robT = Float64Array.from({ length: 16 }, (_, i) => 4e-5 * 10 ** i)
    const vdpT = Float64Array.from({ length: 20 }, (_, i) => 0.1 * (i + 1))
    const runs = [
      { m: robertson, base: { tOut: robT, solver: 'stiff' as const, rtol: 1e-8, atol: 1e-14, maxSteps: 1e6 }, sens: { params: [0, 1, 2], initialStates: [] } },
      { m: vdpol, base: { tOut: vdpT, solver: 'stiff' as const, rtol: 1e-8, atol: 1e-8, maxSteps: 1e6 }, sens: { params: [0], initialStates: [0] } },
    ]
    for (const { m, base, sens } of runs) {
      const plain = simulate(m, base)
      const withS = simulate(m, { ...base, sensitivities: sens })
      expect(withS.stats.steps / plain.stats.steps, m.title).toBeLessThanOrEqual(1.5)
      // the states are those of the run without sensitivities
      for (let q = 0; q < plain.x.length; q++) expect(withS.x[q], m.title).toBe(plain.x[q])
    }
    // with the sensitivities in the error norm too (errorControl: true) Robertson stays within 1.5×
    const full = simulate(robertson, { ...runs[0].base, sensitivities: { ...runs[0].sens, errorControl: true } })
    expect(full.stats.steps / simulate(robertson, runs[0].base).stats.steps).toBeLessThanOrEqual(1.5)
  })
})

describe('auto: the switch at tight tolerances', () => {
  const switchTime = (method: string): number => Number(/switched to stiff at t = ([-+0-9.e]+)/.exec(method)?.[1] ?? NaN)

  it('Robertson at rtol 1e-10 and 1e-12 (atol 1e-14): switches before t = 0.1, within 1.1× the steps of the stiff method alone', () => {
    // before the rtol-scaled stability test the switch came at t = 2.57 (rtol 1e-10) after 2 701
    // explicit steps; the solution's fast transient ends near t = 1e-3 (Hairer & Wanner II, Sec. IV.1)
    const tOut = Float64Array.from({ length: 8 }, (_, i) => 4e-5 * 10 ** i)
    for (const rtol of [1e-10, 1e-12]) {
      const base = { tOut, rtol, atol: 1e-14, maxSteps: 1e6 }
      const auto = simulate(robertson, { ...base, solver: 'auto' })
      const stiff = simulate(robertson, { ...base, solver: 'stiff' })
      expect(auto.stats.switched, `rtol ${rtol}`).toBe(true)
      expect(switchTime(auto.stats.method), `rtol ${rtol}`).toBeLessThan(0.1)
      expect(auto.stats.steps, `rtol ${rtol}`).toBeLessThanOrEqual(1.1 * stiff.stats.steps)
    }
  })

  it('non-stiff problems do not switch at rtol 1e-3 … 1e-12: Arenstorf (one period), a harmonic oscillator, exponential decay', () => {
    // Arenstorf orbit: Hairer, Nørsett & Wanner I, Sec. II.0, period 17.0652165601579625588917206249
    const osc = compileModel(`model "oscillator"\ntime [s]\nstate x = 1\nstate v = 0\ndx/dt = v\ndv/dt = -6.25 * x - 0.75 * v\noutput y = x\n`)
    const decay = compileModel(`model "decay"\ntime [s]\nstate x = 1\ndx/dt = -x\noutput y = x\n`)
    const runs: [CompiledModel, number][] = [[arenstorf, 17.0652165601579625588917206249], [osc, 20], [decay, 10]]
    for (const [m, T] of runs) {
      for (const rtol of [1e-3, 1e-6, 1e-9, 1e-12]) {
        const r = simulate(m, { tOut: Float64Array.of(T), solver: 'auto', rtol, atol: rtol, maxSteps: 1e6 })
        expect(r.stats.switched, `${m.title}, rtol ${rtol}`).toBe(false)
      }
    }
  })
})

