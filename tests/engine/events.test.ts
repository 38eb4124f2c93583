/**
 * Events in a simulation: location on the dense output against closed forms, state resets and modes,
 * sensitivity jumps against finite differences, a fit across events, chattering.
 */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { simulate, type SolverName } from '../../shared/engine'
import { ChatteringError, SimulationError } from '../../shared/engine/errors'
import { runFit, type ProblemSpec } from '../../shared/engine/fit'
import { gaussian } from '../../fixtures/fit/synthetic'
import { BALL, THERMOSTAT_ROOM } from '../../fixtures/engine/event-sheets'

const solvers: SolverName[] = ['rk45', 'stiff', 'odex', 'auto']
// standard acceleration of gravity, 9.80665 m/s² (the SI standard value, CGPM 1901; BIPM SI Brochure)
const G = 9.80665

/**
 * Impact times of a ball dropped from h with restitution e: t1 = sqrt(2h/g), v1 = g·t1, and each
 * flight after impact k takes 2·e^k·v1/g (free fall under constant gravity, e.g. Halliday, Resnick &
 * Walker, Fundamentals of Physics, ch. 2 and 9; the restitution law v⁺ = −e·v⁻ of Newton's
 * experimental rule; from memory).
 */
function impacts(h: number, e: number, n: number): number[] {
  const t1 = Math.sqrt((2 * h) / G)
  const v1 = G * t1
  const out = [t1]
  for (let k = 1; k < n; k++) out.push(out[k - 1] + (2 * Math.pow(e, k) * v1) / G)
  return out
}

describe('bouncing ball: impact times of the closed form', () => {
  const model = compileModel(BALL)
  for (const solver of solvers) {
    it(`hits the floor at t1 = sqrt(2h/g), t_{k+1} = t_k + 2 e^k v1/g (${solver})`, () => {
      const tOut = Float64Array.from({ length: 31 }, (_, i) => i * 0.1)
      const r = simulate(model, { tOut, solver, rtol: 1e-8 })
      const want = impacts(1, 0.8, 8).filter((t) => t <= 3)
      expect(r.events!.map((e) => e.line)).toEqual(want.map(() => 9))
      want.forEach((t, k) => expect(Math.abs(r.events![k].t - t)).toBeLessThan(1e-9))
      // the height between impacts follows the parabola of the flight: at t = 1.0 s (second flight)
      const [t1, t2] = want
      const v1 = G * t1
      const yExact = 0.8 * v1 * (1.0 - t1) - 0.5 * G * (1.0 - t1) ** 2
      expect(1.0).toBeGreaterThan(t1)
      expect(1.0).toBeLessThan(t2)
      expect(Math.abs(r.y[10] - yExact)).toBeLessThan(1e-8)
      // never below the floor at the output times
      for (let i = 0; i < tOut.length; i++) expect(r.y[i]).toBeGreaterThan(-1e-9)
    })
  }

  it('a ball coming to rest (infinitely many impacts before t = t1·(1+e)/(1−e)) is reported as chattering', () => {
    // the impact times converge to t1 + 2 v1/g · e/(1 − e) (geometric series of the flights above)
    const tRest = Math.sqrt(2 / G) * (1 + 0.8) / (1 - 0.8)
    let err: unknown = null
    try {
      simulate(model, { tOut: Float64Array.of(0, 6) })
    } catch (e) {
      err = e
    }
    expect(err).toBeInstanceOf(ChatteringError)
    const ce = err as ChatteringError
    expect(ce.code).toBe('chattering')
    expect(ce.message).toMatch(/chattering: 20 events .* line 9 \(y falls below 0\)/)
    expect(Math.abs((ce.t ?? 0) - tRest)).toBeLessThan(1e-5)
  })
})

describe('bouncing ball: sensitivities across impacts', () => {
  const model = compileModel(BALL)
  const tq = Float64Array.of(0.5, 1.0, 1.7, 2.5)
  const central = (f: (d: number) => Float64Array, d: number) => {
    const a = f(d), b = f(-d)
    return Float64Array.from(a, (v, i) => (v - b[i]) / (2 * d))
  }
  for (const solver of ['rk45', 'stiff'] as SolverName[]) {
    it(`post-impact state sensitivities and impact-time sensitivities match central differences (${solver})`, () => {
      const r = simulate(model, { tOut: tq, solver, rtol: 1e-10, atol: 1e-12, sensitivities: { params: [0], initialStates: [0, 1] } })
      const d = 1e-6
      const run = (p: number, x0: number[]) => simulate(model, { tOut: tq, solver, rtol: 1e-12, atol: 1e-14, p: Float64Array.of(p), x0: Float64Array.from(x0) })
      const fdE = central((h) => run(0.8 + h, [1, 0]).y, d)
      const fdY0 = central((h) => run(0.8, [1 + h, 0]).y, d)
      const fdV0 = central((h) => run(0.8, [1, h]).y, d)
      for (let k = 0; k < tq.length; k++) {
        expect(Math.abs(r.dy![k * 3] - fdE[k])).toBeLessThan(1e-6 * Math.max(1, Math.abs(fdE[k])))
        expect(Math.abs(r.dy![k * 3 + 1] - fdY0[k])).toBeLessThan(1e-6 * Math.max(1, Math.abs(fdY0[k])))
        expect(Math.abs(r.dy![k * 3 + 2] - fdV0[k])).toBeLessThan(1e-6 * Math.max(1, Math.abs(fdV0[k])))
      }
      // event-time sensitivities: finite differences of the impact times, and the closed form
      // t1 = sqrt(2 y0 / g) → ∂t1/∂y0 = 1/(g t1); t2 = t1 + 2 e v1/g → ∂t2/∂e = 2 v1/g
      const times = (p: number, x0: number[]) => run(p, x0).events!.map((e) => e.t)
      const te = (h: number) => Float64Array.from(times(0.8 + h, [1, 0]))
      const fdTe = central(te, d)
      const ty = central((h) => Float64Array.from(times(0.8, [1 + h, 0])), d)
      const ev = r.events!
      for (let k = 0; k < ev.length; k++) {
        expect(Math.abs(ev[k].dt![0] - fdTe[k])).toBeLessThan(1e-6)
        expect(Math.abs(ev[k].dt![1] - ty[k])).toBeLessThan(1e-6)
      }
      const t1 = Math.sqrt(2 / G)
      expect(ev[0].dt![0]).toBeCloseTo(0, 9)
      expect(Math.abs(ev[0].dt![1] - 1 / (G * t1))).toBeLessThan(1e-8)
      expect(Math.abs(ev[1].dt![0] - 2 * t1)).toBeLessThan(1e-8) // 2 v1/g = 2 t1
    })
  }
})

describe('thermostat with hysteresis on a first-order room', () => {
  const model = compileModel(THERMOSTAT_ROOM)
  /**
   * The lumped room C·T' = −UA·(T − T_amb) + P approaches T_∞ exponentially with τ = C/UA, so it
   * takes τ·ln((T_start − T_∞)/(T_end − T_∞)) to go from T_start to T_end (lumped-capacitance
   * solution, Incropera & DeWitt, Fundamentals of Heat and Mass Transfer, Sec. 5.2; from memory).
   */
  const switching = (UA: number, n: number) => {
    const tau = 2e5 / UA
    const Ton = 5 + 2000 / UA
    const out = [tau * Math.log((20 - 5) / (18 - 5))]
    while (out.length < n) {
      const last = out[out.length - 1]
      out.push(out.length % 2 === 1 ? last + tau * Math.log((Ton - 18) / (Ton - 22)) : last + tau * Math.log((22 - 5) / (18 - 5)))
    }
    return out
  }
  for (const solver of solvers) {
    it(`switches on at T_lo and off at T_hi at the analytic times (${solver})`, () => {
      const tOut = Float64Array.from({ length: 61 }, (_, i) => i * 100)
      const r = simulate(model, { tOut, solver, rtol: 1e-8 })
      const want = switching(50, 20).filter((t) => t <= 6000)
      expect(r.events!.length).toBe(want.length)
      r.events!.forEach((e, k) => {
        expect(e.line).toBe(k % 2 === 0 ? 12 : 13)
        // located to the integration tolerance: rtol 1e-8 on T of ~291 K at a slope of ~3e-3 K/s
        expect(Math.abs(e.t - want[k]) / want[k]).toBeLessThan(1e-6)
      })
      // the mode drives the heater output: on between switching k = 0 and 1, off after
      for (let i = 0; i < tOut.length; i++) {
        const on = r.events!.filter((e) => e.t <= tOut[i]).length % 2 === 1
        expect(r.y[i * 2 + 1]).toBe(on ? 2000 : 0)
        // outputs are in internal units (kelvin)
        expect(r.y[i * 2]).toBeGreaterThan(273.15 + 18 - 1e-6)
        expect(r.y[i * 2]).toBeLessThan(273.15 + 22 + 1e-6)
      }
    })
  }

  it('switching-time sensitivities to UA match the closed form and finite differences; the modes are back at the start after a run', () => {
    const tOut = Float64Array.of(0, 3000)
    const r = simulate(model, { tOut, rtol: 1e-10, atol: 1e-10, sensitivities: { params: [0], initialStates: [] } })
    const d = 1e-4
    const tp = simulate(model, { tOut, rtol: 1e-12, atol: 1e-12, p: Float64Array.of(50 + d) }).events!.map((e) => e.t)
    const tm = simulate(model, { tOut, rtol: 1e-12, atol: 1e-12, p: Float64Array.of(50 - d) }).events!.map((e) => e.t)
    r.events!.forEach((e, k) => {
      // every switching time is τ times a number independent of UA (with T_∞ fixed per phase only for
      // the off phases); the first one: t1 = (C/UA)·ln(15/13) → ∂t1/∂UA = −t1/UA
      const fd = (tp[k] - tm[k]) / (2 * d)
      expect(Math.abs(e.dt![0] - fd)).toBeLessThan(1e-5 * Math.abs(fd))
    })
    expect(Math.abs(r.events![0].dt![0] + r.events![0].t / 50)).toBeLessThan(1e-6)
    expect(model.modeValues[0]).toBe(0)
  })
})

describe('a threshold that is a parameter, with a measured input in the condition', () => {
  const SHEET = `time [min]
param UA    = 50 [W/K] in [1, 1000]
param T_lo  = 18 [degC] in [10, 20]
const C     = 2e5 [J/K]
const P_h   = 2000 [W]
const T_amb = 5 [degC]
const T_hi  = 22 [degC]
input T_set = 0 [K] linear "set-point offset"
state T = 20 [degC]
mode  heater = off
dT/dt = (heater * P_h - UA * (T - T_amb)) / C
event T falls below T_lo + T_set then heater = on
event T rises above T_hi then heater = off
output temp = T [degC]
`
  it('event-time and output sensitivities to the threshold (h_θ) and through the input slope (h_u·u\') match central differences', () => {
    const m = compileModel(SHEET)
    const tOut = Float64Array.of(0, 20, 40, 80, 100) // away from the switching times (9.1, 19.5, 35.6, 45.4, 60.3, …)
    const inputs = [{ t: Float64Array.of(0, 100), v: Float64Array.of(0, 1) }]
    const r = simulate(m, { tOut, inputs, rtol: 1e-10, atol: 1e-10, sensitivities: { params: [0, 1], initialStates: [0] } })
    const p0 = Float64Array.from(m.params.map((q) => q.value))
    expect(r.events!.length).toBe(8)
    for (const j of [0, 1]) {
      const d = 1e-4 * p0[j]
      const pp = Float64Array.from(p0); pp[j] += d
      const pm = Float64Array.from(p0); pm[j] -= d
      const a = simulate(m, { tOut, inputs, p: pp, rtol: 1e-12, atol: 1e-12 })
      const b = simulate(m, { tOut, inputs, p: pm, rtol: 1e-12, atol: 1e-12 })
      r.events!.forEach((e, k) => {
        const fd = (a.events![k].t - b.events![k].t) / (2 * d)
        expect(Math.abs(e.dt![j] - fd)).toBeLessThan(2e-5 * Math.max(1, Math.abs(fd)))
      })
      for (let k = 0; k < tOut.length; k++) {
        const fd = (a.y[k] - b.y[k]) / (2 * d)
        expect(Math.abs(r.dy![k * 3 + j] - fd)).toBeLessThan(1e-4 * Math.max(1, Math.abs(fd)))
      }
    }
  })
})

describe('chattering and hysteresis', () => {
  const tank = (lo: string, hi: string) => `model "Sump with a float-switch pump (test)"
time [s]
const A = 2 [m^2]
const q_in = 0.01 [m^3/s]
const q_pump = 0.03 [m^3/s]
const h_lo = ${lo} [m]
const h_hi = ${hi} [m]
state h = 0.5 [m]
mode  pump = off
dh/dt = (q_in - pump * q_pump) / A
event h rises above h_hi then pump = on
event h falls below h_lo then pump = off
output level = h [m]
`
  it('a float switch with one threshold for on and off chatters, and the run says so with the event lines', () => {
    const model = compileModel(tank('1', '1'))
    for (const solver of ['rk45', 'stiff'] as SolverName[]) {
      let err: unknown = null
      try { simulate(model, { tOut: Float64Array.of(0, 500), solver }) } catch (e) { err = e }
      expect(err).toBeInstanceOf(SimulationError)
      expect((err as SimulationError).code).toBe('chattering')
      expect((err as Error).message).toContain('line 11 (h rises above h_hi)')
      expect((err as Error).message).toContain('line 12 (h falls below h_lo)')
      expect((err as Error).message).toContain('hysteresis')
      // the level reaches 1 m after (1 − 0.5)·A/q_in = 100 s; the chattering starts there
      expect(Math.abs(((err as SimulationError).t ?? 0) - 100)).toBeLessThan(1e-3)
    }
  })

  it('with a switching band the pump cycles at the times of the level balance', () => {
    const model = compileModel(tank('0.8', '1.2'))
    const r = simulate(model, { tOut: Float64Array.of(0, 1000) })
    // fill 0.5 → 1.2 m at q_in/A: 140 s; pump down 1.2 → 0.8 m at (q_pump − q_in)/A: 40 s; fill
    // 0.8 → 1.2 m: 80 s (volume balance, common practice, no source)
    const want = [140]
    while (want.length < 30) want.push(want[want.length - 1] + (want.length % 2 === 1 ? 40 : 80))
    const exp = want.filter((t) => t <= 1000)
    expect(r.events!.map((e) => e.t).length).toBe(exp.length)
    r.events!.forEach((e, k) => expect(Math.abs(e.t - exp[k])).toBeLessThan(1e-9 * 1000))
  })
})

describe('a fit across events', () => {
  it('recovers the coefficient of restitution from seeded synthetic bounce heights (invented data)', async () => {
    const model = compileModel(BALL)
    // 1.5 s of drops: two impacts; for every e_r in the fit's bounds [0.6, 0.95] the ball is still
    // bouncing then (it comes to rest at t1·(1+e)/(1−e) = 1.8 s for e = 0.6)
    const time = Float64Array.from({ length: 76 }, (_, i) => i * 0.02)
    const truth = simulate(model, { tOut: time, p: Float64Array.of(0.72), rtol: 1e-10 })
    const g = gaussian(15)
    const height = Float64Array.from(truth.y, (y) => y + 0.002 * g())
    const spec: ProblemSpec = { experiments: [{ name: 'synthetic drops', time, outputs: { height }, inputs: {} }], set: { e_r: 0.62 }, bounds: { e_r: [0.6, 0.95] } }
    const res = await runFit(model, spec)
    const e = res.parameters.find((q) => q.name === 'e_r')!
    expect(Math.abs(e.value - 0.72)).toBeLessThan(3 * (e.stdError ?? 1))
    expect(Math.abs(e.value - 0.72)).toBeLessThan(0.005)
    expect(e.stdError).toBeGreaterThan(0)
  })

  it('multiple shooting is refused for a sheet with modes, with what to do instead', async () => {
    const model = compileModel(`state T = 20 [degC]
const T_lo = 18 [degC]
param k = 0.01 [1/s] in [0, 1]
mode heater = off
dT/dt = -k * (T - T_lo) + heater * k * (T - T_lo)
event T falls below T_lo then heater = on
output temp = T [degC]
`)
    const spec: ProblemSpec = { experiments: [{ name: 'x', time: Float64Array.of(0, 1, 2, 3), outputs: { temp: Float64Array.of(293, 293, 293, 293) }, inputs: {} }] }
    await expect(runFit(model, spec, { segments: { segments: 2 } })).rejects.toThrow(/multiple shooting cannot carry the sheet's modes \(heater\)/)
  })
})
