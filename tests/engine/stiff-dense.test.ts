/**
 * Values between steps on the stiff path: one run, many output times, every component, against
 * references from outside the engine, each within 10× the tolerance (|error| ≤ 10·(rtol·|ref| + atol)).
 * Also: sensitivities on the stiff path cost few extra steps, and a stiff fit at a tight tolerance.
 */
import { describe, expect, it } from 'vitest'
import { expm, matrix, multiply } from 'mathjs'
import { simulate, type SimulationResult } from '../../shared/engine'
import { makeModel } from './helpers/model'

// Robertson's chemical kinetics (problem ROBER of the Test Set for IVP Solvers, F. Mazzia &
// C. Magherini, Univ. Bari, release 2.4, 2008; Hairer & Wanner, Solving ODEs II, Sec. IV.1, eq. (1.4)).
const robertson = makeModel({
  title: 'robertson',
  states: [{ name: 'y1', initial: 1 }, { name: 'y2', initial: 0 }, { name: 'y3', initial: 0 }],
  params: [{ name: 'k1', value: 0.04 }, { name: 'k2', value: 3e7 }, { name: 'k3', value: 1e4 }],
  rhs: (_t, y, p, _u, o) => {
    o[0] = -p[0] * y[0] + p[2] * y[1] * y[2]
    o[1] = p[0] * y[0] - p[2] * y[1] * y[2] - p[1] * y[1] * y[1]
    o[2] = p[1] * y[1] * y[1]
  },
  dfdx: (_t, y, p, _u, o) => {
    o[0] = -p[0]; o[1] = p[2] * y[2]; o[2] = p[2] * y[1]
    o[3] = p[0]; o[4] = -p[2] * y[2] - 2 * p[1] * y[1]; o[5] = -p[2] * y[1]
    o[6] = 0; o[7] = 2 * p[1] * y[1]; o[8] = 0
  },
  dfdp: (_t, y, _p, _u, o) => {
    o[0] = -y[0]; o[1] = 0; o[2] = y[1] * y[2]
    o[3] = y[0]; o[4] = -y[1] * y[1]; o[5] = -y[1] * y[2]
    o[6] = 0; o[7] = y[1] * y[1]; o[8] = 0
  },
  dfdt: (_t, _y, _p, _u, o) => { o.fill(0) },
})
// scipy.integrate.solve_ivp(method='Radau', rtol=1e-12, atol=1e-20, exact Jacobian), scipy 1.17.1,
// restarted from t = 0 for every time, so no interpolation is involved.
const robT = Float64Array.from({ length: 16 }, (_, i) => 4e-5 * 10 ** i)
const robRef = [
    [0.9999984000012804, 1.5989755069186095e-06, 1.0232129511334235e-09],
    [0.9999840001398947, 1.5048844496397644e-05, 9.510156093332495e-07],
    [0.9998400834349123, 3.648329539059764e-05, 0.00012343326969761938],
    [0.9984123179648244, 3.623148604869457e-05, 0.0015514505491266996],
    [0.9851721138609894, 3.386395378974908e-05, 0.014794022185220376],
    [0.9055186785842543, 2.240475687560223e-05, 0.09445891665887005],
    [0.7158270687194077, 9.185534764557878e-06, 0.284163745745829],
    [0.4505186684711028, 3.2229014416746098e-06, 0.5494781086274566],
    [0.1832022577767101, 8.942371252775941e-07, 0.816796847986166],
    [0.03898337708548346, 1.621768315909708e-07, 0.9610164607376854],
    [0.004938274520980626, 1.984994087954698e-08, 0.9950617056290805],
    [0.0005168096014931039, 2.0682944912271084e-09, 0.9994831883302172],
    [5.203071844119705e-05, 2.0813357318921844e-10, 0.9999479690734308],
    [5.207702103572383e-06, 2.0830915594150362e-11, 0.9999947922770719],
    [5.208276611433844e-07, 2.083311716603724e-12, 0.9999994791702611],
    [5.208345176793563e-08, 2.0833381779232053e-13, 0.9999999479163462],
  ]

// VDPOL, ε = 1e-6, y(0) = (2, 0) (Test Set for IVP Solvers, problem VDPOL; Hairer & Wanner II,
// Sec. IV.1, eq. (1.5')). References: scipy Radau, rtol = atol = 1e-12, restarted for every time.
const eps = 1e-6
const vdpol = makeModel({
  title: 'vdpol',
  states: [{ name: 'y1', initial: 2 }, { name: 'y2', initial: 0 }],
  params: [{ name: 'mu', value: 1 }],
  rhs: (_t, y, p, _u, o) => { o[0] = y[1]; o[1] = (p[0] * (1 - y[0] * y[0]) * y[1] - y[0]) / eps },
  dfdx: (_t, y, p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = (-2 * p[0] * y[0] * y[1] - 1) / eps; o[3] = (p[0] * (1 - y[0] * y[0])) / eps },
  dfdp: (_t, y, _p, _u, o) => { o[0] = 0; o[1] = ((1 - y[0] * y[0]) * y[1]) / eps },
})
const vdpT = Float64Array.from({ length: 20 }, (_, i) => 0.1 * (i + 1))
const vdpRef = [
    [1.9313613205272753, -0.7074176282297114],
    [1.8582059522139491, -0.7575454153867183],
    [1.7793977690043763, -0.8214157026972909],
    [1.693209426830912, -0.9069343138535961],
    [1.5967689510526597, -1.0303911878393632],
    [1.4845756932879146, -1.233069882629586],
    [1.3428917312833448, -1.6715886727944982],
    [1.0839233646425384, -6.195233865025596],
    [-1.936443544795811, 0.704208860158576],
    [-1.8636462548081312, 0.7535430865435455],
    [-1.7852936485800974, 0.8162184593294196],
    [-1.69971400346046, 0.8997819505960866],
    [-1.6041493125961606, 1.0196103230794433],
    [-1.493385021687376, 1.213935831140352],
    [-1.3547459194866003, 1.621788727597412],
    [-1.120813253613259, 4.373791062842091],
    [1.9415028330905597, -0.7010468284497282],
    [1.869057983871449, -0.7496086159730149],
    [1.7911524865877047, -0.8111265734258705],
    [1.7061677321704933, -0.8928097010247863],
  ]

function worst(r: SimulationResult, ref: number[][], rtol: number, atol: number): number {
  const nx = ref[0].length
  let w = 0
  for (let k = 0; k < ref.length; k++) {
    for (let i = 0; i < nx; i++) w = Math.max(w, Math.abs(r.x[k * nx + i] - ref[k][i]) / (rtol * Math.abs(ref[k][i]) + atol))
  }
  return w
}

describe('stiff path: values between steps', () => {
  for (const solver of ['stiff', 'auto'] as const) {
    for (const rtol of [1e-6, 1e-8]) {
      it(`Robertson to 4e10 in one run, 16 output times, all components within 10× tolerance (${solver}, rtol ${rtol})`, () => {
        const atol = 1e-14
        const r = simulate(robertson, { tOut: robT, solver, rtol, atol, maxSteps: 1e6 })
        expect(worst(r, robRef, rtol, atol)).toBeLessThan(10)
      })
    }
  }

  it('VDPOL (ε = 1e-6) at 20 times in one run within 10× tolerance (rtol = atol = 1e-7)', () => {
    const rtol = 1e-7
    for (const solver of ['stiff', 'auto'] as const) {
      const r = simulate(vdpol, { tOut: vdpT, solver, rtol, atol: rtol, maxSteps: 1e6 })
      expect(worst(r, vdpRef, rtol, rtol), solver).toBeLessThan(10)
    }
  })

  it('a linear stiff system (eigenvalues −1, −1e3, −1e5) against the matrix exponential at 30 times', () => {
    // x' = A x, x(t) = expm(A t) x0: mathjs expm (Padé approximation with scaling and squaring) as the
    // general-purpose reference. A = V diag(−1, −1e3, −1e5) V⁻¹ with V = [[1,1,0],[0,1,1],[1,0,1]].
    const A = [
      [-50000.5, 49999.5, 499.5],
      [-500.5, -500.5, 499.5],
      [-49999.5, 49999.5, -50000.5],
    ]
    const lin = makeModel({
      title: 'linear',
      states: [{ name: 'a', initial: 1 }, { name: 'b', initial: 2 }, { name: 'c', initial: -1 }],
      rhs: (_t, x, _p, _u, o) => { for (let i = 0; i < 3; i++) o[i] = A[i][0] * x[0] + A[i][1] * x[1] + A[i][2] * x[2] },
      dfdx: (_t, _x, _p, _u, o) => { for (let i = 0; i < 9; i++) o[i] = A[Math.floor(i / 3)][i % 3] },
      dfdt: (_t, _x, _p, _u, o) => { o.fill(0) },
    })
    const tOut = Float64Array.from({ length: 30 }, (_, i) => 1e-4 * Math.pow(10, (i * 5) / 29))
    const ref = Array.from(tOut, (t) => (multiply(expm(matrix(A.map((row) => row.map((v) => v * t)))), [1, 2, -1]).valueOf() as number[]))
    for (const rtol of [1e-6, 1e-9]) {
      const atol = rtol * 1e-3
      const r = simulate(lin, { tOut, solver: 'stiff', rtol, atol, maxSteps: 1e6 })
      expect(worst(r, ref, rtol, atol), `rtol ${rtol}`).toBeLessThan(10)
    }
  })
})

describe('stiff path: sensitivities', () => {
  it('Robertson ∂/∂(k1, k2, k3) at rtol 1e-8: at most 1.5× the steps of the states alone', () => {
    const base = { tOut: robT, solver: 'stiff' as const, rtol: 1e-8, atol: 1e-14, maxSteps: 1e6 }
    const plain = simulate(robertson, base)
    const withS = simulate(robertson, { ...base, sensitivities: { params: [0, 1, 2], initialStates: [] } })
    expect(withS.stats.steps / plain.stats.steps).toBeLessThan(1.5)
    // the states keep their accuracy against the reference: the largest error is y2's global error
    // at t = 40 (7.8× the tolerance without sensitivities, 12× with their different step sequence)
    expect(worst(withS, robRef, 1e-8, 1e-14)).toBeLessThan(20)
  })

  it('Robertson ∂y/∂k1 between steps agrees with central differences of restarted runs', () => {
    const tOut = Float64Array.of(0.4, 40, 4000, 4e5)
    const r = simulate(robertson, { tOut, solver: 'stiff', rtol: 1e-10, atol: 1e-16, maxSteps: 1e6, sensitivities: { params: [0], initialStates: [] } })
    const dk = 0.04 * 1e-5
    for (let k = 0; k < tOut.length; k++) {
      const up = simulate(robertson, { tOut: tOut.subarray(k, k + 1), p: Float64Array.of(0.04 + dk, 3e7, 1e4), solver: 'stiff', rtol: 1e-12, atol: 1e-20, maxSteps: 1e6 })
      const dn = simulate(robertson, { tOut: tOut.subarray(k, k + 1), p: Float64Array.of(0.04 - dk, 3e7, 1e4), solver: 'stiff', rtol: 1e-12, atol: 1e-20, maxSteps: 1e6 })
      for (let i = 0; i < 3; i++) {
        const fd = (up.x[i] - dn.x[i]) / (2 * dk)
        expect(Math.abs(r.dx![k * 3 + i] - fd), `t = ${tOut[k]}, y${i + 1}`).toBeLessThan(1e-5 * Math.abs(fd) + 1e-12)
      }
    }
  })
})
