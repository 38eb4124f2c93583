import { describe, expect, it } from 'vitest'
import { simulate, SteadyStateError } from '../../shared/engine'
import { makeModel } from './helpers/model'

// x(k+1) = a·x(k) + b·u: x(k) = a^k x0 + b u (1 − a^k)/(1 − a) (geometric series; no source)
const a = 0.9
const b = 0.5
const U = 2
const Ts = 0.5
const disc = makeModel({
  title: 'discrete',
  kind: 'discrete',
  sampleTime: Ts,
  states: [{ name: 'x', initial: 4 }],
  params: [{ name: 'a', value: a }, { name: 'b', value: b }],
  inputs: [{ name: 'u', value: U, interp: 'hold' }],
  rhs: (_t, x, p, u, o) => { o[0] = p[0] * x[0] + p[1] * u[0] },
  dfdx: (_t, _x, p, _u, o) => { o[0] = p[0] },
  dfdp: (_t, x, _p, u, o) => { o[0] = x[0]; o[1] = u[0] },
  dfdu: (_t, _x, p, _u, o) => { o[0] = p[1] },
})
const xk = (k: number, x0 = 4) => a ** k * x0 + (b * U * (1 - a ** k)) / (1 - a)
// ∂x(k)/∂a = k a^{k−1} x0 + b u [(1 − a^k) − k a^{k−1}(1 − a)]/(1 − a)²
const dxda = (k: number, x0 = 4) => k * a ** (k - 1) * x0 + (b * U * ((1 - a ** k) - k * a ** (k - 1) * (1 - a))) / (1 - a) ** 2

describe('discrete-time sheets', () => {
  it('iterate their next equations at the sample time, outputs held between samples', () => {
    const tOut = Float64Array.of(0, 0.25, 0.5, 1.0, 1.2, 5)
    const r = simulate(disc, { tOut, sensitivities: { params: [0, 1], initialStates: [0] } })
    const ks = [0, 0, 1, 2, 2, 10]
    ks.forEach((k, i) => {
      expect(Math.abs(r.x[i] - xk(k))).toBeLessThan(1e-12)
      expect(Math.abs(r.dx![i * 3] - dxda(k))).toBeLessThan(1e-10)
      expect(Math.abs(r.dx![i * 3 + 1] - (U * (1 - a ** k)) / (1 - a))).toBeLessThan(1e-10)
      expect(Math.abs(r.dx![i * 3 + 2] - a ** k)).toBeLessThan(1e-12)
    })
    expect(r.stats.method).toBe('discrete')
    expect(r.stats.steps).toBe(10)
  })

  it('uses the input trace at each sample time', () => {
    // u = 0 until t = 1, then 2 (hold); x0 = 4: x(1) = 4a², then the affine recursion with u = 2
    const inputs = [{ t: Float64Array.of(0, 1), v: Float64Array.of(0, U) }]
    const r = simulate(disc, { tOut: Float64Array.of(1, 2), inputs })
    const x2 = 4 * a * a
    expect(Math.abs(r.x[0] - x2)).toBeLessThan(1e-12)
    expect(Math.abs(r.x[1] - xk(2, x2))).toBeLessThan(1e-12)
  })

  it('a steady start solves the fixed point x = f(x)', () => {
    const m = makeModel({ ...discSpec(), states: [{ name: 'x', initial: 0, steady: true }] })
    const r = simulate(m, { tOut: Float64Array.of(0, 3), sensitivities: { params: [0], initialStates: [] } })
    const xs = (b * U) / (1 - a)
    expect(Math.abs(r.x0[0] - xs)).toBeLessThan(1e-12)
    expect(Math.abs(r.x[1] - xs)).toBeLessThan(1e-12)
    // ∂x*/∂a = b u/(1 − a)²
    expect(Math.abs(r.dx![0] - (b * U) / (1 - a) ** 2)).toBeLessThan(1e-9)
    const unit = makeModel({ ...discSpec(), params: [{ name: 'a', value: 1 }, { name: 'b', value: b }], states: [{ name: 'x', initial: 0, steady: true }] })
    expect(() => simulate(unit, { tOut: Float64Array.of(1) })).toThrow(SteadyStateError)
  })
})

function discSpec() {
  return {
    title: 'discrete-steady',
    kind: 'discrete' as const,
    sampleTime: Ts,
    states: [{ name: 'x', initial: 4 }],
    params: [{ name: 'a', value: a }, { name: 'b', value: b }],
    inputs: [{ name: 'u', value: U, interp: 'hold' as const }],
    rhs: disc.rhs,
    dfdx: disc.dfdx,
    dfdp: disc.dfdp,
    dfdu: disc.dfdu,
  }
}
