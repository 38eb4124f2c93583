// The hand-over analysis against closed forms and an independent eigenvalue code.
import { describe, expect, it } from 'vitest'
import { eigs, matrix } from 'mathjs'
import { compileModel } from '../../shared/sheet/index'
import type { FitResult } from '../../shared/api/fit'
import {
  analyzeModel, channelZeros, controllabilityRank, covarianceFromFit, eigenvalues, findOperatingPoints, frequencyResponse,
  inputSlots, linearize, linearStep, observabilityRank, resolveValues,
} from '../../shared/engine/linear/index'
import { FIRST_ORDER, FOLD_START, LINEAR, LINEAR_A, LINEAR_B, LINEAR_C, LINEAR_D, NO_ROOT, SECOND_ORDER, TANK, THREE_ROOTS } from './sheets'
// seeded uniform generator, synthetic test data only
import { mulberry32 as rng } from '../../shared/engine/random'

function analyse(text: string, opts: { inputs?: Record<string, number>; at?: 'steady' | number; frequencies?: number } = {}) {
  const m = compileModel(text)
  const v = resolveValues(m, { inputs: opts.inputs })
  return { m, a: analyzeModel(m, { p: v.p, u: v.u, at: opts.at ?? 'steady', provenance: v.provenance, frequencies: opts.frequencies ?? 0, steps: false }) }
}

describe('eigenvalues (balancing, Hessenberg, Francis double-shift QR)', () => {
  it('match mathjs eigs (an independent implementation) on seeded random matrices', () => {
    const r = rng(7)
    for (const n of [2, 3, 4, 6, 8]) {
      const a = Float64Array.from({ length: n * n }, () => r() - 0.5)
      const ours = eigenvalues(a, n)
      const rows = Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, i * n + n)))
      const ref = eigs(matrix(rows)).values.valueOf() as (number | { re: number; im: number })[]
      const refC = ref.map((v) => (typeof v === 'number' ? { re: v, im: 0 } : v))
      for (let k = 0; k < n; k++) {
        const d = Math.min(...refC.map((c) => Math.hypot(c.re - ours.re[k], c.im - ours.im[k])))
        expect(d).toBeLessThan(1e-10)
      }
    }
  })
  it('find the roots of a polynomial from its companion matrix, and a 12×12 case mathjs does not converge on', () => {
    // (s+1)(s+2)(s+3)(s^2+2s+5): roots −1, −2, −3, −1 ± 2j; coefficients expanded by hand
    // s^5 + 8 s^4 + 28 s^3 + 58 s^2 + 67 s + 30
    const c = [8, 28, 58, 67, 30]
    const n = 5
    const a = new Float64Array(n * n)
    for (let j = 0; j < n; j++) a[j] = -c[j]
    for (let i = 1; i < n; i++) a[i * n + i - 1] = 1
    const ev = eigenvalues(a, n)
    const got = Array.from(ev.re, (re, k) => [re, ev.im[k]])
    for (const [re, im] of [[-1, 2], [-1, -2], [-1, 0], [-2, 0], [-3, 0]]) {
      expect(Math.min(...got.map(([x, y]) => Math.hypot(x - re, y - im)))).toBeLessThan(1e-9)
    }
    // diagonal matrix with a known spectrum after a seeded similarity transform: trace and determinant checks
    const r = rng(11)
    const N = 12
    const M = Float64Array.from({ length: N * N }, () => r() - 0.5)
    const e = eigenvalues(M, N)
    let tr = 0
    for (let i = 0; i < N; i++) tr += M[i * N + i]
    expect(e.re.reduce((s, v) => s + v, 0)).toBeCloseTo(tr, 10)
    expect(e.im.reduce((s, v) => s + v, 0)).toBeCloseTo(0, 12)
  })
})

describe('linearisation', () => {
  it('returns a linear sheet\'s own matrices exactly', () => {
    const { a } = analyse(LINEAR)
    expect(a.A).toEqual(LINEAR_A)
    expect(a.B).toEqual(LINEAR_B)
    expect(a.C).toEqual(LINEAR_C)
    expect(a.D).toEqual(LINEAR_D)
    // operating point of x' = A x + B u: x = −A⁻¹ B u (2×2 inverse by hand)
    const u = [0.5, -1]
    const bu = [1.5 * u[0], -0.2 * u[0] + 0.7 * u[1]]
    const det = -2 * -3 - 0.5 * 0.25
    const x1 = -(-3 * bu[0] - 0.5 * bu[1]) / det
    const x2 = -(-0.25 * bu[0] + -2 * bu[1]) / det
    expect(a.x[0]).toBeCloseTo(x1, 13)
    expect(a.x[1]).toBeCloseTo(x2, 13)
    expect(a.at.kind === 'steady' && a.at.operatingPoint.status).toBe('unique')
  })

  it('gravity-drained tank: the analytic derivative of Torricelli outflow at its level', () => {
    // A dh/dt = q − a √(2 g h): steady level h* = q² / (2 g a²); ∂f/∂h = −a √(2g) / (2 A √h*) = −q / (2 A h*);
    // ∂f/∂q = 1/A; DC gain dh*/dq = q / (g a²) (closed forms by differentiation; Torricelli's law as in
    // Seborg, Edgar & Mellichamp, Process Dynamics and Control, liquid-level examples — chapter from memory)
    const q = 0.002, A = 0.8, a = 0.001, g = 9.81
    const hs = (q * q) / (2 * g * a * a)
    const { a: r } = analyse(TANK)
    expect(r.x[0]).toBeCloseTo(hs, 10)
    expect(r.A[0][0]).toBeCloseTo(-q / (2 * A * hs), 14)
    expect(r.A[0][0]).toBeCloseTo((-a * Math.sqrt(2 * g)) / (2 * A * Math.sqrt(hs)), 14)
    expect(r.B[0][0]).toBeCloseTo(1 / A, 14)
    expect(r.dcGain![0][0]).toBeCloseTo(q / (g * a * a), 8)
    expect(r.poles[0].timeConstant).toBeCloseTo((2 * A * hs) / q, 8)
    expect(r.poles[0].damping).toBe(1)
  })

  it('at a time of a simulation: the point reached and its drift', () => {
    // first-order lag from x = 0 with u held: x(t) = K u (1 − e^(−t/τ)) (closed form)
    const { a } = analyse(FIRST_ORDER, { inputs: { u: 1 }, at: 3 })
    expect(a.at.kind).toBe('time')
    expect(a.x[0]).toBeCloseTo(2.5 * (1 - Math.exp(-3 / 4)), 7)
    expect(a.drift[0]).toBeCloseTo((2.5 - a.x[0]) / 4, 7)
    expect(a.A[0][0]).toBeCloseTo(-1 / 4, 14)
  })
})

describe('poles, zeros, gains and ranks', () => {
  it('second-order lag: natural frequency, damping and DC gain', () => {
    const { a } = analyse(SECOND_ORDER)
    // poles −ζωn ± jωn√(1−ζ²) (Franklin, Powell & Emami-Naeini, Feedback Control, 7th ed., Sec. 3.3)
    const wn = 3, z = 0.2
    expect(a.poles[0].re).toBeCloseTo(-z * wn, 12)
    expect(Math.abs(a.poles[0].im)).toBeCloseTo(wn * Math.sqrt(1 - z * z), 12)
    expect(a.poles[0].naturalFrequency).toBeCloseTo(wn, 12)
    expect(a.poles[0].damping).toBeCloseTo(z, 12)
    expect(a.poles[0].timeConstant).toBeCloseTo(1 / (z * wn), 12)
    expect(a.dcGain![0][0]).toBeCloseTo(1.7, 12)
    expect(a.zeros[0].relativeDegree).toBe(2)
    expect(a.zeros[0].zeros).toEqual([])
  })

  it('zeros of (s + 3)/((s + 1)(s + 2)) in control canonical form, with and without feedthrough', () => {
    // control canonical realisation (Franklin, Powell & Emami-Naeini, Sec. 7.4): A = [0 1; −2 −3], b = [0; 1], c = [3 1]
    const A = Float64Array.of(0, 1, -2, -3)
    const b = Float64Array.of(0, 1)
    const c = Float64Array.of(3, 1)
    const z = channelZeros(A, b, c, 0, 2)
    expect(z.relativeDegree).toBe(1)
    expect(z.zeros!.re[0]).toBeCloseTo(-3, 12)
    // with d = 1: g(s) = 1 + (s+3)/((s+1)(s+2)) = (s² + 4s + 5)/((s+1)(s+2)): zeros −2 ± j
    const z2 = channelZeros(A, b, c, 1, 2)
    const zs = Array.from(z2.zeros!.re, (re, k) => [re, z2.zeros!.im[k]]).sort((p, q) => p[1] - q[1])
    expect(zs[0][0]).toBeCloseTo(-2, 12)
    expect(zs[0][1]).toBeCloseTo(-1, 12)
    expect(zs[1][1]).toBeCloseTo(1, 12)
    // three states, (s − 0.5)/((s+1)(s+2)(s+4)) — a right-half-plane zero: denominator s³ + 7s² + 14s + 8
    const A3 = Float64Array.of(0, 1, 0, 0, 0, 1, -8, -14, -7)
    const z3 = channelZeros(A3, Float64Array.of(0, 0, 1), Float64Array.of(-0.5, 1, 0), 0, 3)
    expect(z3.relativeDegree).toBe(2)
    expect(z3.zeros!.re.length).toBe(1)
    expect(z3.zeros!.re[0]).toBeCloseTo(0.5, 10)
  })

  it('controllability and observability ranks see an unreachable and a hidden mode', () => {
    // x1' = −x1 + u, x2' = −2 x2; y = x1 (common practice, no source: a decoupled mode is neither reachable nor seen)
    const A = Float64Array.of(-1, 0, 0, -2)
    expect(controllabilityRank(A, Float64Array.of(1, 0), 2, 1)).toBe(1)
    expect(observabilityRank(A, Float64Array.of(1, 0), 2, 1)).toBe(1)
    expect(controllabilityRank(A, Float64Array.of(1, 1), 2, 1)).toBe(2)
    expect(observabilityRank(A, Float64Array.of(1, 1), 2, 1)).toBe(2)
  })
})

describe('operating points', () => {
  it('reports all three equilibria inside the bounds, with their stability', () => {
    const m = compileModel(THREE_ROOTS)
    const r = findOperatingPoints(m, { p: new Float64Array(0), u: inputSlots(m, Float64Array.of(0)) })
    expect(r.status).toBe('several')
    const xs = r.solutions.map((s) => s.x[0]).sort()
    expect(xs[0]).toBeCloseTo(1, 10)
    expect(xs[1]).toBeCloseTo(2, 10)
    expect(xs[2]).toBeCloseTo(3, 10)
    const stab = Object.fromEntries(r.solutions.map((s) => [Math.round(s.x[0]), s.stable]))
    expect(stab).toEqual({ 1: true, 2: false, 3: true })
    // the one nearest the start (0.5) first
    expect(r.solutions[0].x[0]).toBeCloseTo(1, 10)
  })
  it('says when there is none', () => {
    const m = compileModel(NO_ROOT)
    const r = findOperatingPoints(m, { p: new Float64Array(0), u: inputSlots(m, Float64Array.of(1)) })
    expect(r.status).toBe('none')
    expect(r.messages[0]).toMatch(/no operating point found/)
    expect(() => analyse(NO_ROOT)).toThrow(/no operating point/)
  })
  it('reaches the root by continuation where Newton from the start overflows', () => {
    // x' = u − eˣ with u = 1e12: Newton's first step from 0 is 1e12 long; the root is ln(1e12)
    const m = compileModel('model "Steep"\ntime [s]\ninput u = 1e12\nstate x = 0\nx\' = u - exp(x)\noutput y = x\n')
    const r = findOperatingPoints(m, { p: new Float64Array(0), u: Float64Array.of(1e12), maxStarts: 1 })
    expect(r.solutions[0].method).toBe('continuation')
    expect(r.solutions[0].x[0]).toBeCloseTo(Math.log(1e12), 10)
    expect(r.messages.join(' ')).toMatch(/continuation/)
  })
  it('steps the inputs from a steady state at the sheet\'s inputs when Newton fails at the requested ones', () => {
    // x' = u − x(x − 2)², start x = 2 (∂f/∂x = 0), requested u = 3: the equilibrium is x = 3 (3·(3 − 2)² = 3, by hand)
    const m = compileModel(FOLD_START)
    const at3 = inputSlots(m, Float64Array.of(3))
    // from the start alone neither Newton nor the state homotopy moves (singular Jacobian at the start)
    const plain = findOperatingPoints(m, { p: new Float64Array(0), u: at3, maxStarts: 1 })
    expect(plain.status).toBe('none')
    const r = findOperatingPoints(m, { p: new Float64Array(0), u: at3, maxStarts: 1, from: inputSlots(m, Float64Array.of(0.5)) })
    expect(r.status).toBe('unique')
    expect(r.solutions[0].method).toBe('input-continuation')
    expect(r.solutions[0].x[0]).toBeCloseTo(3, 10)
    expect(r.solutions[0].stable).toBe(true)
    // at the sheet's u = 0.5 Newton cannot start from x = 2 either: the steady state there comes from a
    // simulation (f(2) = 0.5 > 0 drives x to the stable equilibrium right of 2)
    expect(r.messages.join(' ')).toMatch(/stepping the inputs from the sheet's values in \d+ continuation steps.*simulating at those inputs/)
    expect(at3[0]).toBe(3)
    // through the analysis: reported with the method, linearised there: ∂f/∂x = −(3x² − 8x + 4) = −7 at x = 3 (by hand)
    const { a } = analyse(FOLD_START, { inputs: { u: 3 } })
    if (a.at.kind !== 'steady') throw new Error('expected an operating point')
    expect(a.at.operatingPoint.solutions[0].method).toBe('input-continuation')
    expect(a.x[0]).toBeCloseTo(3, 10)
    expect(a.A[0][0]).toBeCloseTo(-7, 8)
    expect(a.warnings.join(' ')).toMatch(/stepping the inputs/)
  })
  it('keeps states inside their bounds', () => {
    // the equilibria 1 and 2 lie outside [2.5, 4]: only 3 is found
    const m = compileModel(THREE_ROOTS.replace('in [0, 4]', 'in [2.5, 4]').replace('x = 0.5', 'x = 3.5'))
    const r = findOperatingPoints(m, { p: new Float64Array(0), u: inputSlots(m, Float64Array.of(0)) })
    expect(r.status).toBe('unique')
    expect(r.solutions[0].x[0]).toBeCloseTo(3, 10)
  })
})

describe('frequency and step responses', () => {
  it('Bode magnitude and phase of a first-order lag match K/√(1+ω²τ²), −atan(ωτ)', () => {
    // closed form of K/(τs + 1) (Franklin, Powell & Emami-Naeini, Sec. 6.1; Ogata, Modern Control Engineering, Sec. 7-2)
    const { m } = analyse(FIRST_ORDER)
    const v = resolveValues(m, {})
    const lin = linearize(m, 0, new Float64Array(1), v.p, inputSlots(m, v.u))
    const omega = Float64Array.of(0.001, 0.05, 0.25, 1, 10, 300)
    const fr = frequencyResponse(lin, omega)
    const K = 2.5, tau = 4
    omega.forEach((w, k) => {
      expect(fr.channels[0].magnitude[k]).toBeCloseTo(K / Math.sqrt(1 + (w * tau) ** 2), 12)
      expect(fr.channels[0].phaseDeg[k]).toBeCloseTo((-Math.atan(w * tau) * 180) / Math.PI, 10)
    })
  })
  it('Bode magnitude and phase of a second-order lag match the closed form through resonance', () => {
    // K ωn² / (ωn² − ω² + j 2ζωn ω) (same references): |G| = Kωn²/√((ωn²−ω²)² + (2ζωnω)²), ∠G = −atan2(2ζωnω, ωn²−ω²)
    const { m } = analyse(SECOND_ORDER)
    const v = resolveValues(m, {})
    const lin = linearize(m, 0, new Float64Array(2), v.p, inputSlots(m, v.u))
    const omega = Float64Array.from({ length: 60 }, (_, i) => 10 ** (-1 + (2.5 * i) / 59))
    const fr = frequencyResponse(lin, omega)
    const K = 1.7, wn = 3, z = 0.2
    omega.forEach((w, k) => {
      const re = wn * wn - w * w
      const im = 2 * z * wn * w
      expect(fr.channels[0].magnitude[k]).toBeCloseTo((K * wn * wn) / Math.hypot(re, im), 10)
      expect(fr.channels[0].phaseDeg[k]).toBeCloseTo((-Math.atan2(im, re) * 180) / Math.PI, 8)
    })
    // at ω = ωn: |G| = K/(2ζ), phase −90°
    const at = frequencyResponse(lin, Float64Array.of(wn)).channels[0]
    expect(at.magnitude[0]).toBeCloseTo(1.7 / 0.4, 12)
    expect(at.phaseDeg[0]).toBeCloseTo(-90, 10)
  })
  it('the linear step response is exact for a first-order lag and close to the nonlinear tank for a small step', () => {
    const { m } = analyse(FIRST_ORDER)
    const v = resolveValues(m, {})
    const lin = linearize(m, 0, new Float64Array(1), v.p, inputSlots(m, v.u))
    const s = linearStep(lin, 0, 0.4, 0.5, 40)
    // y(t) = K Δu (1 − e^(−t/τ)) (closed form)
    s.t.forEach((t, k) => expect(s.y[k]).toBeCloseTo(2.5 * 0.4 * (1 - Math.exp(-t / 4)), 12))
    const tank = compileModel(TANK)
    const tv = resolveValues(tank, {})
    const a = analyzeModel(tank, { p: tv.p, u: tv.u, at: 'steady', provenance: tv.provenance, frequencies: 0, steps: true })
    const st = a.stepResponses![0]
    const lastL = st.linear[0][st.t.length - 1]!
    const lastN = st.nonlinear![0][st.t.length - 1]!
    const rise = lastN - a.y[0]
    // a 5 % step of the inflow: the linear model's final rise is within 5 % of the nonlinear one
    // (h* ∝ q²: the nonlinear rise is (1.05² − 1)/0.1 = 1.025 times the linear one; common practice, no source)
    expect(Math.abs(lastL - a.y[0] - rise) / rise).toBeLessThan(0.05)
    expect(st.nonlinear![0][0]).toBeCloseTo(a.y[0], 9)
  })
})

describe('uncertainty from the fit covariance', () => {
  // synthetic covariance (no fit): tank with se(A) = 3 %, se(a) = 2 %, correlation 0.4
  const m = compileModel(TANK)
  const sA = 0.8 * 0.03, sa = 0.001 * 0.02, rho = 0.4
  const fit = {
    parameters: [
      { name: 'A', experiment: null, unit: 'm^2', value: 0.8, stdError: sA },
      { name: 'a', experiment: null, unit: 'm^2', value: 0.001, stdError: sa },
    ],
    correlation: { names: ['A', 'a'], matrix: [[1, rho], [rho, 1]] },
  } as unknown as FitResult
  const cov = covarianceFromFit(m, fit)!
  const v = resolveValues(m, { fit: { result: fit, label: 'a synthetic fit' } })
  const a = analyzeModel(m, { p: v.p, u: v.u, at: 'steady', provenance: v.provenance, covariance: cov, frequencies: 20, steps: false })

  it('first-order pole and gain uncertainty matches the delta method in closed form', () => {
    // λ = −g a² / (A q) and G = q / (g a²): var(ln λ) = 4 (sa/a)² + (sA/A)² − 4 ρ (sa/a)(sA/A), var(ln G) = 4 (sa/a)²
    const ra = sa / 0.001, rA = sA / 0.8
    const sdLnLambda = Math.sqrt(4 * ra * ra + rA * rA - 4 * rho * ra * rA)
    expect(a.poles[0].sdRe! / Math.abs(a.poles[0].re)).toBeCloseTo(sdLnLambda, 6)
    expect(a.dcGainSd![0][0]! / a.dcGain![0][0]!).toBeCloseTo(2 * ra, 6)
    // the band of the Bode magnitude at the lowest frequency is the DC gain's, in dB: 20/ln10 · sd(G)/G
    expect(a.frequencyResponse!.channels[0].magnitudeDbSd![0]!).toBeCloseTo((20 / Math.LN10) * 2 * ra, 2)
    expect(a.provenance).toMatch(/A, a from a synthetic fit/)
  })

  it('agrees with a seeded Monte Carlo run over the parameter distribution (synthetic)', () => {
    const r = rng(2026)
    const normal = () => Math.sqrt(-2 * Math.log(1 - r())) * Math.cos(2 * Math.PI * r())
    const N = 4000
    const poles: number[] = []
    const gains: number[] = []
    const p = Float64Array.from(v.p)
    const iA = m.params.findIndex((q) => q.name === 'A')
    const ia = m.params.findIndex((q) => q.name === 'a')
    for (let k = 0; k < N; k++) {
      // correlated normal pair by the Cholesky factor of [[1, ρ], [ρ, 1]]
      const z1 = normal()
      const z2 = rho * z1 + Math.sqrt(1 - rho * rho) * normal()
      p[iA] = 0.8 + sA * z1
      p[ia] = 0.001 + sa * z2
      const op = findOperatingPoints(m, { p, u: inputSlots(m, v.u), maxStarts: 1 })
      const lin = linearize(m, 0, op.solutions[0].x, p, inputSlots(m, v.u))
      poles.push(lin.A[0])
      gains.push(-lin.B[0] / lin.A[0])
    }
    const sd = (xs: number[]) => {
      const mean = xs.reduce((s, x) => s + x, 0) / xs.length
      return Math.sqrt(xs.reduce((s, x) => s + (x - mean) ** 2, 0) / (xs.length - 1))
    }
    // standard error of a sample standard deviation ≈ sd/√(2N) ≈ 1.1 %: allow 6 %
    expect(Math.abs(sd(poles) / a.poles[0].sdRe! - 1)).toBeLessThan(0.06)
    expect(Math.abs(sd(gains) / a.dcGainSd![0][0]! - 1)).toBeLessThan(0.06)
  })
})
