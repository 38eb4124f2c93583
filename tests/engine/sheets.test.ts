/**
 * The engine on sheets compiled by shared/sheet (the templates in models/): closed forms where they
 * exist, sensitivities against central differences otherwise. Input traces here are invented
 * (Tinmoor Works scenario), not measurements.
 */
import { describe, expect, it } from 'vitest'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { compileModel } from '../../shared/sheet/index'
import type { CompiledModel } from '../../shared/sheet/compiled'
import { simulate, type SimulationRequest } from '../../shared/engine'

const root = join(__dirname, '..', '..')
const sheet = (name: string): CompiledModel => compileModel(readFileSync(join(root, 'models', name), 'utf8'))

function fdCheck(model: CompiledModel, req: SimulationRequest, params: number[], states: number[]): void {
  const r = simulate(model, { ...req, sensitivities: { params, initialStates: states } })
  const rtol = (req.rtol as number | undefined) ?? 1e-6
  const ns = params.length + states.length
  const ny = model.ny
  const p0 = Float64Array.from(model.params, (p) => p.value)
  const x0 = Float64Array.from(model.states, (s) => s.initial)
  const cases: ['p' | 'x', number][] = [...params.map((j) => ['p', j] as ['p', number]), ...states.map((i) => ['x', i] as ['x', number])]
  cases.forEach(([kind, idx], j) => {
    const base = kind === 'p' ? p0 : x0
    const d = Math.sqrt(rtol) * Math.abs(base[idx])
    const run = (v: number) => {
      const arr = Float64Array.from(base)
      arr[idx] = v
      return simulate(model, { ...req, ...(kind === 'p' ? { p: arr } : { x0: arr }) }).y
    }
    const yp = run(base[idx] + d)
    const ym = run(base[idx] - d)
    const name = kind === 'p' ? model.params[idx].name : model.states[idx].name
    for (let k = 0; k < req.tOut.length; k++) {
      for (let i = 0; i < ny; i++) {
        const fd = (yp[k * ny + i] - ym[k * ny + i]) / (2 * d)
        const s = r.dy![(k * ny + i) * ns + j]
        const scale = Math.abs(s) + Math.abs(r.y[k * ny + i]) / Math.abs(base[idx])
        // central-difference error ~√rtol relative (see sensitivities.test.ts)
        expect(Math.abs(s - fd), `∂${model.outputs[i].name}/∂${name} at t = ${req.tOut[k]}`).toBeLessThan(20 * Math.sqrt(rtol) * scale)
      }
    }
  })
}

describe('simulating compiled template sheets', () => {
  it('mixing line: delay, flows and chamber volume sensitivities agree with central differences', () => {
    const m = sheet('mixing-line.sheet')
    const tOut = Float64Array.from({ length: 13 }, (_, i) => i * 10)
    // invented traces: syrup flow ramps up over 20 s, water steps down at t = 50 s
    const h = 1 / 3600 // m³/h → m³/s (internal units)
    const qs = { t: Float64Array.of(0, 10, 30, 120), v: Float64Array.of(0.8 * h, 0.8 * h, 1.1 * h, 1.1 * h) }
    const qw = { t: Float64Array.of(0, 50, 55, 120), v: Float64Array.of(4 * h, 4 * h, 3.5 * h, 3.5 * h) }
    const idx = (n: string) => m.params.findIndex((p) => p.name === n)
    fdCheck(m, { tOut, inputs: [qs, qw], rtol: 1e-9, atol: 1e-9 }, [idx('c_s'), idx('tau'), idx('V_m')], [0])
  })

  it('heated buffer vessel: level and temperature sensitivities agree with central differences', () => {
    const m = sheet('heated-buffer-vessel.sheet')
    const tOut = Float64Array.from({ length: 11 }, (_, i) => i * 60)
    const P = { t: Float64Array.of(0, 120, 400), v: Float64Array.of(0, 20e3, 5e3) } // heater steps (hold)
    const Tf = { t: Float64Array.of(0, 200, 260, 600), v: Float64Array.of(288, 288, 295, 295) }
    const idx = (n: string) => m.params.findIndex((p) => p.name === n)
    const inputs = m.inputs.map((u) => (u.name === 'P_h' ? P : u.name === 'T_feed' ? Tf : null))
    fdCheck(m, { tOut, inputs, rtol: 1e-9, atol: 1e-10 }, [idx('Cv'), idx('UA'), idx('tau')], [1])
  })

  it('discrete first-order template follows T(k) = T_amb + a^k (T0 − T_amb) + b P (1 − a^k)/(1 − a)', () => {
    // the sheet's own header formula; geometric series (no source)
    const m = sheet('discrete-first-order.sheet')
    const r = simulate(m, { tOut: Float64Array.of(0, 10, 100, 1000) })
    const a = 0.95
    const b = 0.75
    const P = 0.4
    const Tamb = 275.15
    ;[0, 1, 10, 100].forEach((k, i) => {
      const ex = Tamb + a ** k * (276 - Tamb) + (b * P * (1 - a ** k)) / (1 - a)
      expect(Math.abs(r.y[i] - ex)).toBeLessThan(1e-9)
    })
  })
})
