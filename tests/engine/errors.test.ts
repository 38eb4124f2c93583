import { describe, expect, it } from 'vitest'
import {
  AbortedError, InputTraceError, NonFiniteDerivativeError, simulate, SimulationRequestError, SteadyStateError,
  StepLimitError, StepSizeTooSmallError, TimeBudgetError, type SolverName,
} from '../../shared/engine'
import { makeModel } from './helpers/model'

function caught(fn: () => unknown): unknown {
  try {
    fn()
  } catch (e) {
    return e
  }
  return null
}

const methods: SolverName[] = ['rk45', 'odex', 'stiff', 'auto']

describe('typed failures, never a hang', () => {
  const turnsNaN = makeModel({
    title: 'nan',
    states: [{ name: 'level', initial: 1 }],
    rhs: (t, x, _p, _u, o) => { o[0] = t < 1.25 ? -x[0] : NaN },
    dfdx: (_t, _x, _p, _u, o) => { o[0] = -1 },
  })
  for (const solver of methods) {
    it(`a derivative that becomes NaN names the state and the time (${solver})`, () => {
      const e = caught(() => simulate(turnsNaN, { tOut: Float64Array.of(3), solver }))
      expect(e).toBeInstanceOf(NonFiniteDerivativeError)
      expect((e as NonFiniteDerivativeError).state).toBe('level')
      expect((e as Error).message).toMatch(/derivative of state 'level' is NaN at t = /)
      // the step-size control closes in on t = 1.25; odex (no retry inside the package) reports the
      // first stage time past it
      const t = (e as NonFiniteDerivativeError).t as number
      expect(t).toBeGreaterThanOrEqual(1.25)
      expect(t).toBeLessThan(solver === 'odex' ? 3 : 1.2501)
    })
  }

  // x' = x², x(0) = 1: x = 1/(1 − t) blows up at t = 1 (no source)
  const blowUp = makeModel({
    title: 'blow-up',
    states: [{ name: 'x', initial: 1 }],
    rhs: (_t, x, _p, _u, o) => { o[0] = x[0] * x[0] },
    dfdx: (_t, x, _p, _u, o) => { o[0] = 2 * x[0] },
  })
  for (const solver of methods) {
    it(`a blow-up (x' = x²) stops with a typed error close to t = 1 (${solver})`, () => {
      const e = caught(() => simulate(blowUp, { tOut: Float64Array.of(2), solver }))
      expect(e instanceof StepSizeTooSmallError || e instanceof NonFiniteDerivativeError || e instanceof StepLimitError).toBe(true)
      expect((e as StepSizeTooSmallError).t).toBeGreaterThan(0.99)
      expect((e as StepSizeTooSmallError).t).toBeLessThan(1.0001)
    })
  }

  it('rk45 on the blow-up reports a step size too small', () => {
    const e = caught(() => simulate(blowUp, { tOut: Float64Array.of(2), solver: 'rk45' }))
    expect(e).toBeInstanceOf(StepSizeTooSmallError)
    expect((e as Error).message).toMatch(/step size too small/)
  })

  const lag = makeModel({
    title: 'lag-err',
    states: [{ name: 'x', initial: 0 }],
    inputs: [{ name: 'feed', value: 0 }],
    rhs: (_t, x, _p, u, o) => { o[0] = u[0] - x[0] },
  })
  it('an input trace with non-increasing time is an InputTraceError naming input and row', () => {
    const e = caught(() => simulate(lag, { tOut: Float64Array.of(1), inputs: [{ t: Float64Array.of(0, 0.5, 0.4), v: Float64Array.of(1, 1, 1) }] }))
    expect(e).toBeInstanceOf(InputTraceError)
    expect((e as InputTraceError).input).toBe('feed')
    expect((e as InputTraceError).row).toBe(3)
  })

  it('output times out of order are a request error', () => {
    const e = caught(() => simulate(lag, { tOut: Float64Array.of(0, 2, 1) }))
    expect(e).toBeInstanceOf(SimulationRequestError)
    expect((e as Error).message).toMatch(/output times out of order: #3 \(t = 1\) comes after t = 2/)
    expect(caught(() => simulate(lag, { t0: 1, tOut: Float64Array.of(0.5) }))).toBeInstanceOf(SimulationRequestError)
  })

  it('a failed steady start is a SteadyStateError naming the state', () => {
    // x' = 1 + x² has no real steady state
    const m = makeModel({
      title: 'no-steady',
      states: [{ name: 'T_wall', initial: 0.3, steady: true }],
      rhs: (_t, x, _p, _u, o) => { o[0] = 1 + x[0] * x[0] },
      dfdx: (_t, x, _p, _u, o) => { o[0] = 2 * x[0] },
    })
    const e = caught(() => simulate(m, { tOut: Float64Array.of(1) }))
    expect(e).toBeInstanceOf(SteadyStateError)
    expect((e as Error).message).toMatch(/steady initial state \(T_wall\) not found/)
  })

  it('the step limit is configurable and exceeded cleanly', () => {
    const osc = makeModel({
      title: 'osc-limit',
      states: [{ name: 'x', initial: 1 }, { name: 'v', initial: 0 }],
      rhs: (_t, x, _p, _u, o) => { o[0] = x[1]; o[1] = -x[0] },
    })
    for (const solver of methods) {
      const e = caught(() => simulate(osc, { tOut: Float64Array.of(1000), solver, maxSteps: 50 }))
      expect(e, solver).toBeInstanceOf(StepLimitError)
      expect((e as Error).message).toMatch(/step limit of 50 steps exceeded/)
      expect((e as Error).message).toMatch(/raise maxSteps \(now 50\)/)
    }
  })

  it('failure advice names the next thing to try that the run has not tried', () => {
    const osc = makeModel({
      title: 'osc-advice',
      states: [{ name: 'x', initial: 1 }, { name: 'v', initial: 0 }],
      params: [{ name: 'w', value: 1 }],
      rhs: (_t, x, p, _u, o) => { o[0] = x[1]; o[1] = -p[0] * p[0] * x[0] },
      dfdx: (_t, _x, p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = -p[0] * p[0]; o[3] = 0 },
      dfdp: (_t, x, p, _u, o) => { o[0] = 0; o[1] = -2 * p[0] * x[0] },
    })
    const tOut = Float64Array.of(1000)
    const explicit = caught(() => simulate(osc, { tOut, solver: 'rk45', maxSteps: 50 })) as Error
    expect(explicit.message).toMatch(/try solver 'stiff' \(the run used 'rk45'\)/)
    const notSwitched = caught(() => simulate(osc, { tOut, solver: 'auto', maxSteps: 50 })) as Error
    expect(notSwitched.message).toMatch(/try solver 'stiff' \(the run used 'auto' and did not detect stiffness\)/)
    // the stiff method already in use: no advice to use it; tight rtol and sensitivities named
    const stiff = caught(() => simulate(osc, { tOut, solver: 'stiff', rtol: 1e-9, maxSteps: 50, sensitivities: { params: [0], initialStates: [], errorControl: true } })) as Error
    expect(stiff).toBeInstanceOf(StepLimitError)
    expect(stiff.message).not.toMatch(/try solver 'stiff'/)
    expect(stiff.message).toMatch(/loosen rtol \(now 1e-9\)/)
    expect(stiff.message).toMatch(/errorControl: false/)
    expect(stiff.message).toMatch(/stiff method was already in use/)
    // by default the stiff method leaves the sensitivities out of its error norm: nothing to advise there
    const stiffDefault = caught(() => simulate(osc, { tOut, solver: 'stiff', rtol: 1e-9, maxSteps: 50, sensitivities: { params: [0], initialStates: [] } })) as Error
    expect(stiffDefault).toBeInstanceOf(StepLimitError)
    expect(stiffDefault.message).not.toMatch(/errorControl/)
  })

  it('a time budget and an abort signal stop the integration', () => {
    let calls = 0
    const ctl = new AbortController()
    const slow = makeModel({
      title: 'slow',
      states: [{ name: 'x', initial: 1 }, { name: 'v', initial: 0 }],
      rhs: (_t, x, _p, _u, o) => {
        calls++
        if (calls === 5000) ctl.abort()
        o[0] = x[1]
        o[1] = -x[0]
      },
    })
    const e1 = caught(() => simulate(slow, { tOut: Float64Array.of(1e6), rtol: 1e-10, maxSteps: 1e9, timeBudgetMs: 20, solver: 'rk45' }))
    expect(e1).toBeInstanceOf(TimeBudgetError)
    calls = 0
    const e2 = caught(() => simulate(slow, { tOut: Float64Array.of(1e6), rtol: 1e-10, maxSteps: 1e9, signal: ctl.signal, solver: 'rk45' }))
    expect(e2).toBeInstanceOf(AbortedError)
    expect(caught(() => simulate(slow, { tOut: Float64Array.of(1), signal: ctl.signal }))).toBeInstanceOf(AbortedError)
  })
})
