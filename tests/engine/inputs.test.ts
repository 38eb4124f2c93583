import { describe, expect, it } from 'vitest'
import { InputTraceError, simulate, type SolverName } from '../../shared/engine'
import { linspace, makeModel } from './helpers/model'

const methods: SolverName[] = ['rk45', 'odex', 'stiff', 'auto']

// x' = (u − x)/τ, first-order lag (common practice, no source)
const tau = 0.7
const lag = makeModel({
  title: 'lag',
  states: [{ name: 'x', initial: 0 }],
  inputs: [{ name: 'u', value: 0, interp: 'hold' }],
  rhs: (_t, x, _p, u, o) => { o[0] = (u[0] - x[0]) / tau },
  dfdx: (_t, _x, _p, _u, o) => { o[0] = -1 / tau },
  dfdu: (_t, _x, _p, _u, o) => { o[0] = 1 / tau },
})

describe('input traces', () => {
  for (const solver of methods) {
    it(`a held unit step at t = 1 gives x = 1 − exp(−(t − 1)/τ) to 1e-8 (${solver})`, () => {
      // closed-form step response of a first-order lag (common practice, no source)
      const tOut = linspace(0, 6, 61)
      const inputs = [{ t: Float64Array.of(0, 1), v: Float64Array.of(0, 1) }]
      const r = simulate(lag, { tOut, inputs, solver, rtol: 1e-11, atol: 1e-13 })
      for (let k = 0; k < tOut.length; k++) {
        const t = tOut[k]
        const ex = t <= 1 ? 0 : 1 - Math.exp(-(t - 1) / tau)
        expect(Math.abs(r.x[k] - ex), `t = ${t}`).toBeLessThan(1e-8)
      }
      // past the trace's end the last value holds, with a warning
      expect(r.warnings.join('\n')).toMatch(/input 'u': trace ends at t = 1; its last value is held to t = 6/)
    })
  }

  it('the solver lands on breakpoints and keeps its step size (no fresh start-up at each sample)', () => {
    // a trace sampled every 0.01 over 10 time units (1000 breakpoints) of a constant value: the
    // solution is the same as without a trace, and the step count stays near the breakpoint count
    const n = 1001
    const inputs = [{ t: linspace(0, 10, n), v: new Float64Array(n).fill(1) }]
    const r = simulate(lag, { tOut: Float64Array.of(10), inputs, solver: 'rk45', rtol: 1e-8, atol: 1e-10 })
    expect(Math.abs(r.x[0] - (1 - Math.exp(-10 / tau)))).toBeLessThan(1e-8)
    expect(r.stats.steps).toBeLessThan(1.05 * (n - 1))
    expect(r.stats.rejected).toBe(0)
  })

  it('a held square wave: exact piecewise response, and the jumps cost few rejected steps', () => {
    // between samples x relaxes towards the held value: x_{k+1} = u_k + (x_k − u_k) e^{−Δ/τ} (the closed
    // form of a linear first-order ODE with a constant input; common practice, no source)
    const n = 41
    const ts = linspace(0, 10, n)
    const v = Float64Array.from({ length: n }, (_, i) => i % 2)
    for (const solver of ['rk45', 'stiff', 'auto'] as const) {
      const r = simulate(lag, { tOut: Float64Array.of(10), inputs: [{ t: ts, v }], solver, rtol: 1e-8, atol: 1e-10 })
      let x = 0
      for (let k = 0; k < n - 1; k++) x = v[k] + (x - v[k]) * Math.exp(-(ts[k + 1] - ts[k]) / tau)
      // measured: 4e-11 (rk45, auto) and 8e-11 (stiff) at rtol 1e-8, atol 1e-10
      expect(Math.abs(r.x[0] - x), solver).toBeLessThan(1e-9)
      // the carried-over derivative is refreshed at each of the 40 jumps: a stale one would cost a
      // rejected step at every jump (measured: 4 rejected for rk45 and auto, 6 for stiff)
      expect(r.stats.rejected, solver).toBeLessThanOrEqual(10)
    }
  })

  it('linear interpolation between non-uniform samples: ∫u dt is the trapezoid sum', () => {
    // x' = u with u piecewise linear: x(T) is exactly the trapezoid rule on the samples (no source)
    const integ = makeModel({
      title: 'integrator',
      states: [{ name: 'x', initial: 0 }],
      inputs: [{ name: 'u', value: 0, interp: 'linear' }],
      rhs: (_t, _x, _p, u, o) => { o[0] = u[0] },
      dfdx: (_t, _x, _p, _u, o) => { o[0] = 0 },
      dfdu: (_t, _x, _p, _u, o) => { o[0] = 1 },
    })
    const ts = Float64Array.of(0, 0.3, 0.35, 1.2, 2.9, 3.0, 4.4)
    const vs = Float64Array.of(1, -2, 5, 0.5, 3, -1, 2)
    let trap = 0
    for (let i = 1; i < ts.length; i++) trap += 0.5 * (vs[i] + vs[i - 1]) * (ts[i] - ts[i - 1])
    for (const solver of methods) {
      const r = simulate(integ, { tOut: Float64Array.of(2.9, 4.4), inputs: [{ t: ts, v: vs }], solver, rtol: 1e-10, atol: 1e-12 })
      expect(Math.abs(r.x[1] - trap), solver).toBeLessThan(1e-10)
    }
  })

  it('starts at t0, not at the first sample; before the first sample the first value holds', () => {
    const inputs = [{ t: Float64Array.of(2, 3), v: Float64Array.of(1, 1) }]
    const r = simulate(lag, { t0: 0, tOut: Float64Array.of(0, 2, 4), inputs, rtol: 1e-10, atol: 1e-12 })
    // u = 1 from t0 = 0 on: x(t) = 1 − e^{−t/τ}
    expect(Math.abs(r.x[1] - (1 - Math.exp(-2 / tau)))).toBeLessThan(1e-8)
    expect(r.warnings.some((w) => /starts at t = 2, after t0 = 0/.test(w))).toBe(true)
    // t0 = 1.5 with the sheet's initial value 0 at 1.5
    const r2 = simulate(lag, { t0: 1.5, tOut: Float64Array.of(1.5, 4), inputs, rtol: 1e-10, atol: 1e-12 })
    expect(r2.x[0]).toBe(0)
    expect(Math.abs(r2.x[1] - (1 - Math.exp(-2.5 / tau)))).toBeLessThan(1e-8)
  })

  it('with no trace an input takes the sheet value', () => {
    const lagK = makeModel({
      title: 'lag-const',
      states: [{ name: 'x', initial: 0 }],
      inputs: [{ name: 'u', value: 2.5 }],
      rhs: (_t, x, _p, u, o) => { o[0] = (u[0] - x[0]) / tau },
    })
    const r = simulate(lagK, { tOut: Float64Array.of(3) })
    expect(Math.abs(r.x[0] - 2.5 * (1 - Math.exp(-3 / tau)))).toBeLessThan(1e-5)
    expect(r.warnings).toEqual([])
  })

  it('a NaN inside a trace is an error naming the row', () => {
    const inputs = [{ t: Float64Array.of(0, 1, 2, 3), v: Float64Array.of(0, 1, NaN, 1) }]
    expect(() => simulate(lag, { tOut: Float64Array.of(3), inputs })).toThrow(InputTraceError)
    expect(() => simulate(lag, { tOut: Float64Array.of(3), inputs })).toThrow(/input 'u', row 3: value is NaN at t = 2/)
  })

  it('non-increasing sample times are an error naming the row', () => {
    const inputs = [{ t: Float64Array.of(0, 1, 1, 3), v: Float64Array.of(0, 1, 1, 1) }]
    expect(() => simulate(lag, { tOut: Float64Array.of(3), inputs })).toThrow(/input 'u', row 3: sample times must increase: t = 1 follows t = 1/)
    const back = [{ t: Float64Array.of(0, 2, 1), v: Float64Array.of(0, 1, 1) }]
    let err: unknown
    try {
      simulate(lag, { tOut: Float64Array.of(3), inputs: back })
    } catch (e) {
      err = e
    }
    expect(err).toBeInstanceOf(InputTraceError)
    expect((err as InputTraceError).row).toBe(3)
  })

  it('outputs come exactly at the requested times without forcing small steps', () => {
    const dense = simulate(lag, { tOut: linspace(0, 10, 2001), inputs: [{ t: Float64Array.of(0), v: Float64Array.of(1) }], solver: 'rk45', rtol: 1e-6 })
    const sparse = simulate(lag, { tOut: Float64Array.of(0, 10), inputs: [{ t: Float64Array.of(0), v: Float64Array.of(1) }], solver: 'rk45', rtol: 1e-6 })
    expect(dense.stats.steps).toBe(sparse.stats.steps)
    for (let k = 0; k < 2001; k += 50) {
      const t = dense.t[k]
      expect(Math.abs(dense.x[k] - (1 - Math.exp(-t / tau)))).toBeLessThan(1e-5)
    }
  })
})
