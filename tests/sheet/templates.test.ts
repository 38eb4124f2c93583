// The template library in models/: each sheet checks clean, has a header comment, a unit on
// every symbol, bounds on every free parameter, and compiles to finite values at its start.
import { describe, expect, it } from 'vitest'
import { checkModel, compileModel, parseModel } from '../../shared/sheet/index'
import { defaultPoint, templates } from './helpers'

const list = templates()

describe('template library', () => {
  it('holds at least the nine required sheets', () => {
    expect(list.length).toBeGreaterThanOrEqual(9)
    const names = list.map((t) => t.file)
    for (const n of ['heated-buffer-vessel', 'cold-store', 'counterflow-heat-exchanger', 'vibration-isolator', 'jacketed-reactor', 'batch-fermenter', 'air-receiver', 'mixing-line', 'discrete-first-order']) {
      expect(names).toContain(`${n}.sheet`)
    }
  })

  for (const { file, text } of list) {
    describe(file, () => {
      it('checks clean (no error, no warning)', () => {
        const r = checkModel(text)
        expect(r.diagnostics).toEqual([])
        expect(r.ok).toBe(true)
        expect(r.summary.states.length).toBeGreaterThan(0)
        expect(r.summary.outputs.length).toBeGreaterThan(0)
      })

      it('starts with a header comment on the physics and assumptions, set in Tinmoor Works', () => {
        const header = text.split('\n').filter((l) => l.startsWith('#')).join('\n')
        expect(header).toMatch(/Tinmoor Works/)
        expect(header).toMatch(/Physics/)
        expect(header).toMatch(/Assumptions/)
      })

      it('gives every symbol a unit and every free parameter bounds inside which its value lies', () => {
        const m = parseModel(text).model!
        for (const s of [...m.states, ...m.params, ...m.consts, ...m.inputs, ...m.outputs]) expect(s.unit, s.name).not.toBeNull()
        for (const l of m.lookups) { expect(l.unit).not.toBeNull(); expect(l.argUnit).not.toBeNull() }
        for (const p of m.params) {
          if (p.fixed) continue
          expect(p.lower, p.name).not.toBeNull()
          expect(p.upper, p.name).not.toBeNull()
          expect(p.value).toBeGreaterThanOrEqual(p.lower!)
          expect(p.value).toBeLessThanOrEqual(p.upper!)
        }
      })

      it('compiles, and its right side and outputs are finite at the initial state', () => {
        const c = compileModel(text)
        const pt = defaultPoint(c)
        const f = new Float64Array(c.nx)
        const y = new Float64Array(c.ny)
        c.rhs(pt.t, pt.x, pt.p, pt.u, f)
        c.outputsFn(pt.t, pt.x, pt.p, pt.u, y)
        expect(Array.from(f).every(Number.isFinite)).toBe(true)
        expect(Array.from(y).every(Number.isFinite)).toBe(true)
      })
    })
  }

  it('the batch fermenter runs in hours and consumes its substrate (explicit Euler, 0.01 h steps)', () => {
    const c = compileModel(list.find((t) => t.file === 'batch-fermenter.sheet')!.text)
    expect(c.timeUnit).toBe('h')
    const pt = defaultPoint(c)
    const f = new Float64Array(c.nx)
    for (let k = 0; k < 2400; k++) {
      c.rhs(k * 0.01, pt.x, pt.p, pt.u, f)
      for (let i = 0; i < c.nx; i++) pt.x[i] += 0.01 * f[i]
    }
    // after 24 h the sugar is nearly used up and the biomass has grown by the yield (mass balance:
    // X - X0 ~ Y_xs (S0 - S) less death; synthetic check of the sheet, no source)
    expect(pt.x[1]).toBeLessThan(1)
    expect(pt.x[0]).toBeGreaterThan(15)
    expect(pt.x[0]).toBeLessThan(0.2 + 0.5 * 40)
  })

  it('the air receiver settles where the compressor delivery balances use and leaks, with the isothermal time constant', () => {
    const c = compileModel(list.find((t) => t.file === 'air-receiver.sheet')!.text)
    const pt = defaultPoint(c)
    const f = new Float64Array(c.nx)
    const y = new Float64Array(c.ny)
    // mass balance at rest (common practice, no source): m_comp = Kv u p + K_leak (p − p_atm)
    // → p = (m_comp + K_leak p_atm)/(Kv u + K_leak) = (0.12 + 5e-8·101300)/(1e-7 + 5e-8) Pa
    const pSteady = (0.12 + 5e-8 * 101300) / (1e-7 + 5e-8)
    // time constant V/(R T (Kv u + K_leak)) = 3/(287.05·293.15·1.5e-7) ≈ 237.7 s: 3000 s is over 12 of them
    for (let k = 0; k < 30_000; k++) {
      c.rhs(k * 0.1, pt.x, pt.p, pt.u, f)
      pt.x[0] += 0.1 * f[0]
    }
    expect(pt.x[0] / pSteady).toBeCloseTo(1, 4)
    c.outputsFn(0, pt.x, pt.p, pt.u, y)
    expect((y[0] - (pSteady - 101300)) / pSteady).toBeCloseTo(0, 4) // gauge pressure (internal units: Pa)
  })

  it('the buffer-vessel level settles where the outlet law balances the feed', () => {
    const c = compileModel(list.find((t) => t.file === 'heated-buffer-vessel.sheet')!.text)
    const pt = defaultPoint(c)
    const f = new Float64Array(c.nx)
    for (let k = 0; k < 40_000; k++) {
      c.rhs(k * 0.5, pt.x, pt.p, pt.u, f)
      for (let i = 0; i < c.nx; i++) pt.x[i] += 0.5 * f[i]
    }
    // q_in = Cv sqrt(h) → h = (2e-3 / 4e-3)^2 = 0.25 m (Torricelli outlet, valve fully open)
    expect(pt.x[0]).toBeCloseTo(0.25, 4)
  })
})
