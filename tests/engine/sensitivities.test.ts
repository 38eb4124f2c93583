import { describe, expect, it } from 'vitest'
import { simulate, type SimulationRequest, type SolverName } from '../../shared/engine'
import type { CompiledModel } from '../../shared/sheet/compiled'
import { decayModel, linspace, makeModel } from './helpers/model'

const methods: SolverName[] = ['rk45', 'odex', 'stiff', 'auto']

/**
 * Central differences of the outputs with step √rtol·|θ| (θ a parameter or an initial state), as the
 * issue prescribes. Error model: truncation O(δ²) plus integration error ~rtol·|y| over 2δ, so with
 * δ = √rtol·|θ| both are ~√rtol·|y|/|θ|; the tolerance is 20·√rtol·(|∂y/∂θ| + max|y|/|θ|).
 */
function centralDiff(model: CompiledModel, req: SimulationRequest, kind: 'p' | 'x', idx: number): Float64Array {
  const rtol = (req.rtol as number | undefined) ?? 1e-6
  const base = kind === 'p' ? Float64Array.from(req.p ?? model.params.map((q) => q.value)) : Float64Array.from(req.x0 ?? model.states.map((s) => s.initial))
  const d = Math.sqrt(rtol) * Math.abs(base[idx])
  const run = (v: number) => {
    const arr = Float64Array.from(base)
    arr[idx] = v
    return simulate(model, { ...req, sensitivities: undefined, ...(kind === 'p' ? { p: arr } : { x0: arr }) }).y
  }
  const yp = run(base[idx] + d)
  const ym = run(base[idx] - d)
  return yp.map((v, i) => (v - ym[i]) / (2 * d))
}

function checkAgainstFd(model: CompiledModel, req: SimulationRequest): void {
  const r = simulate(model, req)
  const sp = req.sensitivities!
  const ns = sp.params.length + sp.initialStates.length
  const ny = model.ny
  const nt = req.tOut.length
  const rtol = (req.rtol as number | undefined) ?? 1e-6
  let ymax = 0
  for (const v of r.y) ymax = Math.max(ymax, Math.abs(v))
  const thetas: ['p' | 'x', number][] = [...sp.params.map((j) => ['p', j] as ['p', number]), ...sp.initialStates.map((i) => ['x', i] as ['x', number])]
  thetas.forEach(([kind, idx], j) => {
    const fd = centralDiff(model, req, kind, idx)
    const th = kind === 'p' ? (req.p ?? Float64Array.from(model.params.map((q) => q.value)))[idx] : (req.x0 ?? Float64Array.from(model.states.map((s) => s.initial)))[idx]
    for (let k = 0; k < nt; k++) {
      for (let i = 0; i < ny; i++) {
        const s = r.dy![(k * ny + i) * ns + j]
        const tol = 20 * Math.sqrt(rtol) * (Math.abs(s) + ymax / Math.abs(th))
        expect(Math.abs(s - fd[k * ny + i]), `${r.stats.method} θ=${kind}${idx} t=${req.tOut[k]} y${i}`).toBeLessThan(tol)
      }
    }
  })
}

/**
 * x' = (u(t − d) − x)/T: a first-order lag whose input is read d = tau/60 late (time in minutes, tau
 * in seconds), written out with its Jacobians; the input trace linear or held.
 */
function delayedLag(title: string, interp: 'linear' | 'hold', T: number, tauS: number): CompiledModel {
  return makeModel({
    title,
    secondsPerTimeUnit: 60,
    states: [{ name: 'x', initial: 0 }],
    params: [{ name: 'tau', value: tauS }],
    inputs: [{ name: 'u', value: 0, interp }],
    delays: [{ input: 0, param: 0 }],
    rhs: (_t, x, _p, u, o) => { o[0] = (u[1] - x[0]) / T },
    dfdx: (_t, _x, _p, _u, o) => { o[0] = -1 / T },
    dfdp: (_t, _x, _p, _u, o) => { o[0] = 0 },
    dfdu: (_t, _x, _p, _u, o) => { o[0] = 0; o[1] = 1 / T },
  })
}

describe('forward sensitivities', () => {
  // x' = −k x: ∂x/∂k = −t·x0·e^{−kt}, ∂x/∂x0 = e^{−kt} (differentiate the closed form; no source)
  const decay = decayModel('decay-sens', 2, 0.6)
  for (const solver of methods) {
    it(`decay: ∂x/∂k and ∂x/∂x0 match the closed form (${solver})`, () => {
      const tOut = linspace(0, 5, 11)
      const r = simulate(decay, { tOut, solver, rtol: 1e-10, atol: 1e-12, sensitivities: { params: [0], initialStates: [0] } })
      for (let k = 0; k < tOut.length; k++) {
        const t = tOut[k]
        const e = Math.exp(-0.6 * t)
        expect(Math.abs(r.dx![k * 2] - -t * 2 * e)).toBeLessThan(1e-8)
        expect(Math.abs(r.dx![k * 2 + 1] - e)).toBeLessThan(1e-8)
        expect(r.dy![k * 2]).toBe(r.dx![k * 2])
      }
    })
  }

  const osc = makeModel({
    title: 'osc-sens',
    states: [{ name: 'x', initial: 1 }, { name: 'v', initial: 0.3 }],
    params: [{ name: 'w', value: 2.5 }, { name: 'zeta', value: 0.15 }],
    outputs: [{ name: 'pos' }, { name: 'energy' }],
    rhs: (_t, x, p, _u, o) => { o[0] = x[1]; o[1] = -2 * p[1] * p[0] * x[1] - p[0] * p[0] * x[0] },
    dfdx: (_t, _x, p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = -p[0] * p[0]; o[3] = -2 * p[1] * p[0] },
    dfdp: (_t, x, p, _u, o) => { o[0] = 0; o[1] = 0; o[2] = -2 * p[1] * x[1] - 2 * p[0] * x[0]; o[3] = -2 * p[0] * x[1] },
    outputsFn: (_t, x, p, _u, o) => { o[0] = x[0]; o[1] = 0.5 * (x[1] * x[1] + p[0] * p[0] * x[0] * x[0]) },
    dgdx: (_t, x, p, _u, o) => { o[0] = 1; o[1] = 0; o[2] = p[0] * p[0] * x[0]; o[3] = x[1] },
    dgdp: (_t, x, p, _u, o) => { o[0] = 0; o[1] = 0; o[2] = p[0] * x[0] * x[0]; o[3] = 0 },
  })
  for (const solver of methods) {
    it(`damped oscillator: ∂y/∂p and ∂y/∂x0 agree with central differences (${solver})`, () => {
      checkAgainstFd(osc, { tOut: linspace(0, 8, 17), solver, rtol: 1e-9, atol: 1e-12, sensitivities: { params: [0, 1], initialStates: [0, 1] } })
    })
  }

  it('sensitivities left out of error control still come out, with fewer or equal steps', () => {
    const req: SimulationRequest = { tOut: linspace(0, 8, 5), solver: 'rk45', rtol: 1e-7, sensitivities: { params: [0, 1], initialStates: [], errorControl: false } }
    const off = simulate(osc, req)
    const on = simulate(osc, { ...req, sensitivities: { params: [0, 1], initialStates: [] } })
    const plain = simulate(osc, { ...req, sensitivities: undefined })
    expect(off.stats.steps).toBe(plain.stats.steps)
    expect(on.stats.steps).toBeGreaterThanOrEqual(off.stats.steps)
    for (let i = 0; i < off.dy!.length; i++) expect(Math.abs(off.dy![i] - on.dy![i])).toBeLessThan(1e-3 * (1 + Math.abs(on.dy![i])))
  })

  it('a delayed first-order system: x and ∂x/∂tau match the closed form (tau in seconds, time in minutes)', () => {
    // x' = (u(t − d) − x)/T with u a ramp 0→1 on [1, 2] min (linear trace), d = tau/60 min.
    // Closed form with a = 1 + d (first-order response to a ramp; no source):
    //   a ≤ t ≤ a+1:  x = (t − a) − T(1 − e^{−(t−a)/T}),    ∂x/∂a = −1 + e^{−(t−a)/T}
    //   t > a+1:      x = 1 + (x1 − 1) e^{−(t−a−1)/T},        ∂x/∂a = (x1 − 1)/T · e^{−(t−a−1)/T}
    // with x1 = 1 − T(1 − e^{−1/T}); ∂x/∂tau = ∂x/∂a / 60.
    const T = 0.8
    const tauS = 18
    const m = delayedLag('delay-lag', 'linear', T, tauS)
    const a = 1 + tauS / 60
    const x1 = 1 - T * (1 - Math.exp(-1 / T))
    const exact = (t: number): [number, number] => {
      if (t <= a) return [0, 0]
      if (t <= a + 1) return [t - a - T * (1 - Math.exp(-(t - a) / T)), (-1 + Math.exp(-(t - a) / T)) / 60]
      return [1 + (x1 - 1) * Math.exp(-(t - a - 1) / T), ((x1 - 1) / T) * Math.exp(-(t - a - 1) / T) / 60]
    }
    const tOut = linspace(0, 6, 61)
    const inputs = [{ t: Float64Array.of(0, 1, 2), v: Float64Array.of(0, 0, 1) }]
    for (const solver of methods) {
      const r = simulate(m, { tOut, inputs, solver, rtol: 1e-10, atol: 1e-12, sensitivities: { params: [0], initialStates: [] } })
      for (let k = 0; k < tOut.length; k++) {
        const [x, dx] = exact(tOut[k])
        expect(Math.abs(r.x[k] - x), `${solver} x t=${tOut[k]}`).toBeLessThan(1e-8)
        expect(Math.abs(r.dx![k] - dx), `${solver} dx/dtau t=${tOut[k]}`).toBeLessThan(1e-9)
      }
    }
    // The slope u'(t − d) in the ∂x/∂tau equation jumps at each sample + d: the solver must refresh
    // its carried-over derivative there. A stale one shows as an error far above the tolerance
    // (∂x/∂tau·|tau| is controlled like x: about 1e-6/18 here) and as many rejected steps.
    for (const solver of ['rk45', 'stiff'] as const) {
      const r = simulate(m, { tOut, inputs, solver, rtol: 1e-6, atol: 1e-8, sensitivities: { params: [0], initialStates: [] } })
      let err = 0
      for (let k = 0; k < tOut.length; k++) err = Math.max(err, Math.abs(r.dx![k] - exact(tOut[k])[1]))
      expect(err, `${solver} max |∂x/∂tau error| at rtol 1e-6`).toBeLessThan(5e-8)
      expect(r.stats.rejected, solver).toBeLessThan(10)
    }
  })

  it('a delayed held step: ∂x/∂tau from the moving jump matches the closed form', () => {
    // x' = (u(t − d) − x)/T, u a held unit step at t = 1, d = tau/60 (time in minutes):
    // x = 1 − e^{−(t−1−d)/T} for t > 1 + d, so ∂x/∂tau = −e^{−(t−1−d)/T}/(60 T) (no source)
    const T = 0.8
    const tauS = 30
    const m = delayedLag('delay-hold', 'hold', T, tauS)
    const d = tauS / 60
    const tOut = linspace(0, 5, 51)
    const inputs = [{ t: Float64Array.of(0, 1), v: Float64Array.of(0, 1) }]
    for (const solver of methods) {
      const r = simulate(m, { tOut, inputs, solver, rtol: 1e-10, atol: 1e-12, sensitivities: { params: [0], initialStates: [] } })
      for (let k = 0; k < tOut.length; k++) {
        const t = tOut[k]
        const late = t > 1 + d
        const x = late ? 1 - Math.exp(-(t - 1 - d) / T) : 0
        const dx = late ? -Math.exp(-(t - 1 - d) / T) / (60 * T) : 0
        expect(Math.abs(r.x[k] - x), `${solver} x t=${t}`).toBeLessThan(1e-8)
        expect(Math.abs(r.dx![k] - dx), `${solver} dx/dtau t=${t}`).toBeLessThan(1e-9)
      }
    }
  })

  it('steady initial state: x0 from Newton and its sensitivities from the implicit-function theorem', () => {
    // x' = a − k x² steady at x = √(a/k); ∂x/∂a = 1/(2√(ak)), ∂x/∂k = −√a/(2 k^{3/2}) (no source)
    const m = makeModel({
      title: 'steady',
      states: [{ name: 'x', initial: 1, steady: true }, { name: 'y', initial: 0.5 }],
      params: [{ name: 'a', value: 3 }, { name: 'k', value: 0.5 }],
      rhs: (_t, x, p, _u, o) => { o[0] = p[0] - p[1] * x[0] * x[0]; o[1] = x[0] - x[1] },
      dfdx: (_t, x, p, _u, o) => { o[0] = -2 * p[1] * x[0]; o[1] = 0; o[2] = 1; o[3] = -1 },
      dfdp: (_t, x, _p, _u, o) => { o[0] = 1; o[1] = -x[0] * x[0]; o[2] = 0; o[3] = 0 },
    })
    const r = simulate(m, { tOut: Float64Array.of(0, 2), rtol: 1e-10, atol: 1e-12, sensitivities: { params: [0, 1], initialStates: [1] } })
    const xs = Math.sqrt(3 / 0.5)
    expect(Math.abs(r.x0[0] - xs)).toBeLessThan(1e-12)
    expect(Math.abs(r.x[2] - xs)).toBeLessThan(1e-9) // stays put
    const ns = 3
    expect(Math.abs(r.dx![0 * ns + 0] - 1 / (2 * Math.sqrt(3 * 0.5)))).toBeLessThan(1e-10)
    expect(Math.abs(r.dx![0 * ns + 1] - -Math.sqrt(3) / (2 * Math.pow(0.5, 1.5)))).toBeLessThan(1e-10)
    expect(r.dx![0 * ns + 2]).toBe(0)
    expect(r.dx![1 * ns + 2]).toBe(1)
  })

  it('stiff path (W-method): sensitivities of a stiff Van der Pol agree with central differences', () => {
    const vdp = makeModel({
      title: 'vdp-sens',
      states: [{ name: 'y1', initial: 2 }, { name: 'y2', initial: 0 }],
      params: [{ name: 'eps', value: 1e-3 }],
      rhs: (_t, y, p, _u, o) => { o[0] = y[1]; o[1] = ((1 - y[0] * y[0]) * y[1] - y[0]) / p[0] },
      dfdx: (_t, y, p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = (-2 * y[0] * y[1] - 1) / p[0]; o[3] = (1 - y[0] * y[0]) / p[0] },
      dfdp: (_t, y, p, _u, o) => { o[0] = 0; o[1] = -((1 - y[0] * y[0]) * y[1] - y[0]) / (p[0] * p[0]) },
    })
    checkAgainstFd(vdp, { tOut: Float64Array.of(0.2, 0.5, 0.6), solver: 'stiff', rtol: 1e-8, atol: 1e-10, maxSteps: 1e6, sensitivities: { params: [0], initialStates: [0] } })
  })
})
