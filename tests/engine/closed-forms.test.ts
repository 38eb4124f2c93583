import { describe, expect, it } from 'vitest'
import { expm, matrix, multiply } from 'mathjs'
import { simulate, type SolverName } from '../../shared/engine'
import { decayModel, linspace, makeModel } from './helpers/model'

const methods: SolverName[] = ['rk45', 'odex', 'stiff', 'auto']

describe('closed-form solutions', () => {
  // x' = -k x, x(0) = x0  →  x = x0·exp(-k t): elementary closed form (common practice, no source)
  const decay = decayModel('decay', 3, 0.8)
  for (const solver of methods) {
    it(`exponential decay matches x0·exp(-kt) (${solver})`, () => {
      const tOut = linspace(0, 6, 13)
      const r = simulate(decay, { tOut, solver, rtol: 1e-9, atol: 1e-12 })
      for (let i = 0; i < tOut.length; i++) {
        const ex = 3 * Math.exp(-0.8 * tOut[i])
        expect(Math.abs(r.x[i] - ex)).toBeLessThan(2e-8 * Math.max(ex, 1e-3))
        expect(r.y[i]).toBe(r.x[i])
      }
      expect(r.stats.steps).toBeGreaterThan(0)
    })
  }

  // Damped oscillator x'' + 2ζω x' + ω² x = 0, x(0)=1, x'(0)=0, ζ<1:
  // x = e^{-ζωt}(cos ω_d t + ζω/ω_d sin ω_d t), ω_d = ω√(1-ζ²)
  // (standard result for the underdamped linear oscillator, e.g. Boyce & DiPrima, Elementary
  // Differential Equations, Sec. 3.7; from memory).
  const w = 2.5
  const zeta = 0.15
  const osc = makeModel({
    title: 'oscillator',
    states: [{ name: 'x', initial: 1 }, { name: 'v', initial: 0 }],
    params: [{ name: 'w', value: w }, { name: 'zeta', value: zeta }],
    rhs: (_t, x, p, _u, o) => { o[0] = x[1]; o[1] = -2 * p[1] * p[0] * x[1] - p[0] * p[0] * x[0] },
    dfdx: (_t, _x, p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = -p[0] * p[0]; o[3] = -2 * p[1] * p[0] },
  })
  const wd = w * Math.sqrt(1 - zeta * zeta)
  const xOsc = (t: number) => Math.exp(-zeta * w * t) * (Math.cos(wd * t) + ((zeta * w) / wd) * Math.sin(wd * t))
  for (const solver of methods) {
    it(`damped harmonic oscillator matches its closed form (${solver})`, () => {
      const tOut = linspace(0, 10, 41)
      const r = simulate(osc, { tOut, solver, rtol: 1e-10, atol: 1e-12 })
      let err = 0
      for (let i = 0; i < tOut.length; i++) err = Math.max(err, Math.abs(r.x[2 * i] - xOsc(tOut[i])))
      expect(err).toBeLessThan(solver === 'stiff' ? 5e-8 : 1e-8)
    })
  }

  it('tolerances per state: a loose state does not cost steps, a tight one keeps its accuracy', () => {
    // two uncoupled decays with closed forms x_i = e^{−k_i t} (no source)
    const two = makeModel({
      title: 'two-decays',
      states: [{ name: 'fast', initial: 1 }, { name: 'slow', initial: 1 }],
      rhs: (_t, x, _p, _u, o) => { o[0] = -3 * x[0]; o[1] = -0.2 * x[1] },
    })
    const tOut = Float64Array.of(4)
    const both = simulate(two, { tOut, solver: 'rk45', rtol: 1e-10, atol: 1e-12 })
    const mixed = simulate(two, { tOut, solver: 'rk45', rtol: Float64Array.of(1e-4, 1e-10), atol: Float64Array.of(1e-4, 1e-12) })
    expect(mixed.stats.steps).toBeLessThan(both.stats.steps)
    expect(Math.abs(mixed.x[1] - Math.exp(-0.8))).toBeLessThan(1e-9)
    expect(Math.abs(mixed.x[0] - Math.exp(-12))).toBeLessThan(1e-3)
  })

  it('4-state linear system with a step input matches the matrix exponential (mathjs expm) to 1e-9', () => {
    // x' = A x + B u; u steps from 0 to 1.5 at t = 0.5 (a hold trace). Reference: the exact solution
    // through the matrix exponential of the augmented matrix [[A, B], [0, 0]] (Van Loan, "Computing
    // integrals involving the matrix exponential", IEEE TAC 23 (1978)), evaluated by mathjs expm.
    const A = [
      [-1.0, 0.4, 0.0, 0.1],
      [0.2, -0.8, 0.3, 0.0],
      [0.0, -0.5, -0.3, 1.2],
      [0.1, 0.0, -1.2, -0.4],
    ]
    const B = [1.0, 0.0, 0.5, -0.2]
    const x0 = [1, -1, 0.5, 0]
    const lin = makeModel({
      title: 'linear4',
      states: x0.map((v, i) => ({ name: `x${i + 1}`, initial: v })),
      inputs: [{ name: 'u', value: 0, interp: 'hold' }],
      rhs: (_t, x, _p, u, o) => {
        for (let i = 0; i < 4; i++) {
          let s = B[i] * u[0]
          for (let j = 0; j < 4; j++) s += A[i][j] * x[j]
          o[i] = s
        }
      },
      dfdx: (_t, _x, _p, _u, o) => { for (let i = 0; i < 4; i++) for (let j = 0; j < 4; j++) o[i * 4 + j] = A[i][j] },
      dfdu: (_t, _x, _p, _u, o) => { for (let i = 0; i < 4; i++) o[i] = B[i] },
    })
    const ts = 0.5
    const U = 1.5
    const aug = (uval: number) => {
      const M = Array.from({ length: 5 }, (_, i) => Array.from({ length: 5 }, (_, j) => (i < 4 && j < 4 ? A[i][j] : i < 4 && j === 4 ? B[i] * uval : 0)))
      return M
    }
    const propagate = (x: number[], dt: number, uval: number): number[] => {
      const E = expm(matrix(multiply(aug(uval), dt) as number[][])).toArray() as number[][]
      return [0, 1, 2, 3].map((i) => E[i][4] + [0, 1, 2, 3].reduce((s, j) => s + E[i][j] * x[j], 0))
    }
    const tOut = Float64Array.from([0.25, 0.5, 0.9, 1.7, 3.2, 5])
    const inputs = [{ t: Float64Array.from([0, ts]), v: Float64Array.from([0, U]) }]
    for (const solver of methods) {
      const r = simulate(lin, { tOut, inputs, solver, rtol: 1e-12, atol: 1e-14 })
      const xs = propagate(x0, ts, 0)
      for (let k = 0; k < tOut.length; k++) {
        const t = tOut[k]
        const ex = t <= ts ? propagate(x0, t, 0) : propagate(xs, t - ts, U)
        for (let i = 0; i < 4; i++) expect(Math.abs(r.x[k * 4 + i] - ex[i]), `${solver} t=${t} x${i + 1}`).toBeLessThan(1e-9)
      }
    }
  })

  it('Arenstorf orbit returns to y(0) after one period: rk45 at 1e-12, odex at 1e-11', () => {
    // Hairer, Nørsett & Wanner, Solving ODEs I, 2nd ed., Sec. II.0, eq. (0.1), initial values (0.2)
    // and period T.
    const mu = 0.012277471
    const mu1 = 1 - mu
    const y0 = [0.994, 0, 0, -2.00158510637908252240537862224]
    const T = 17.0652165601579625588917206249
    const aren = makeModel({
      title: 'arenstorf',
      states: ['y1', 'y2', 'v1', 'v2'].map((name, i) => ({ name, initial: y0[i] })),
      rhs: (_t, y, _p, _u, o) => {
        const D1 = Math.pow((y[0] + mu) ** 2 + y[1] ** 2, 1.5)
        const D2 = Math.pow((y[0] - mu1) ** 2 + y[1] ** 2, 1.5)
        o[0] = y[2]
        o[1] = y[3]
        o[2] = y[0] + 2 * y[3] - (mu1 * (y[0] + mu)) / D1 - (mu * (y[0] - mu1)) / D2
        o[3] = y[1] - 2 * y[2] - (mu1 * y[1]) / D1 - (mu * y[1]) / D2
      },
    })
    for (const [solver, tol] of [['rk45', 1e-12], ['odex', 1e-11]] as const) {
      const r = simulate(aren, { tOut: Float64Array.from([T / 2, T]), solver, rtol: tol, atol: tol })
      for (let i = 0; i < 4; i++) expect(Math.abs(r.x[4 + i] - y0[i]), `${solver} component ${i}`).toBeLessThan(1e-6)
      // half way round the orbit is far from the start (the check would pass trivially otherwise)
      expect(Math.abs(r.x[0] - y0[0])).toBeGreaterThan(0.5)
    }
  })

  it('Lotka–Volterra keeps its first integral within 1e-8 relative over ten periods (rk45, odex at 1e-11)', () => {
    // x' = αx − βxy, y' = δxy − γy; V = δx − γ ln x + βy − α ln y is constant along solutions (the
    // invariant is shown, for u' = u(v − 2), v' = v(1 − u), in Hairer, Lubich & Wanner, Geometric
    // Numerical Integration, 2nd ed. 2006, Sec. I.1.1; it follows for any α, β, γ, δ > 0 by
    // differentiating V). The set α = 2/3, β = 4/3, γ = δ = 1 is not that book's: it is the one of the
    // Wikipedia article "Lotka–Volterra equations" (from memory); the start (1.8, 1.8) is ours.
    const [al, be, ga, de] = [2 / 3, 4 / 3, 1, 1]
    const lv = makeModel({
      title: 'lotka-volterra',
      states: [{ name: 'prey', initial: 1.8 }, { name: 'predator', initial: 1.8 }],
      rhs: (_t, x, _p, _u, o) => { o[0] = al * x[0] - be * x[0] * x[1]; o[1] = de * x[0] * x[1] - ga * x[1] },
    })
    const V = (x: number, y: number) => de * x - ga * Math.log(x) + be * y - al * Math.log(y)
    const V0 = V(1.8, 1.8)
    const tOut = linspace(0, 150, 3001)
    for (const solver of ['rk45', 'odex'] as const) {
      const r = simulate(lv, { tOut, solver, rtol: 1e-11, atol: 1e-11 })
      let maxRel = 0
      let periods = 0
      for (let k = 0; k < tOut.length; k++) {
        maxRel = Math.max(maxRel, Math.abs(V(r.x[2 * k], r.x[2 * k + 1]) - V0) / Math.abs(V0))
        if (k > 0 && r.x[2 * (k - 1)] < 1.8 && r.x[2 * k] >= 1.8) periods++ // upward crossings of x = 1.8
      }
      expect(periods).toBeGreaterThanOrEqual(10)
      expect(maxRel, solver).toBeLessThan(1e-8)
    }
  })
})
