/**
 * Event and mode lines: what the checker says and where, the summary, the generated conditions and
 * resets with their exact Jacobians, events inside parts, and the exports' refusal.
 */
import { describe, expect, it } from 'vitest'
import { checkModel, compileModel, parseModel, type ResolvePart } from '../../shared/sheet/index'
import { simulate } from '../../shared/engine'
import { buildExport, exportMeta } from '../../shared/export/index'

const BASE = `state h = 1 [m]
state T = 300 [K]
param k = 1 [1/s] fixed
const h_set = 1 [m]
mode pump = off
dh/dt = -k * h * (1 - pump)
dT/dt = -k * (T - 290)
`
const at8 = (line: string) => checkModel(BASE + line + '\n').diagnostics.filter((d) => d.line === 8)

describe('the checker on event and mode lines', () => {
  const cases: [string, number, number, RegExp][] = [
    ['event h falls below T then pump = on', 7, 22, /the event condition 'h falls below T' compares values of unlike units: m and K/],
    ['event h falls below h_set then k = 2', 32, 33, /an event assigns states and modes only: 'k' is a param/],
    ['event h falls below h_set then pump = half', 39, 43, /mode pump takes a position: off, on, closed, open or a whole number; found 'half'/],
    ['event h falls below h_set then T = h', 32, 37, /the event sets T to a value in m, but T is in K/],
    ['event h sinks below h_set then pump = on', 6, 27, /an event condition says how it crosses: A falls below B, A rises above B or A crosses B/],
    ['event h falls below h_set pump = on', 6, 36, /an event says what happens after then/],
    ['event h falls below h_set then q = 1', 32, 33, /unknown name 'q'/],
    ['event h falls below h_set then pump = on, pump = off', 43, 47, /pump is assigned twice in one event/],
    ['event k falls below 2 then pump = on', 7, 22, /depends on no state, input or t: it can never cross/],
    ['event h falls below h_set then', 31, 32, /expected an assignment NAME = value after then/],
    ['mode valve = ajar', 14, 18, /a mode starts at a position: off, on, closed, open or a whole number; found 'ajar'/],
  ]
  for (const [line, column, endColumn, message] of cases) {
    it(`${line} → an error at its place`, () => {
      const ds = at8(line)
      expect(ds).toHaveLength(1)
      expect(ds[0]).toMatchObject({ severity: 'error', column, endColumn })
      expect(ds[0].message).toMatch(message)
    })
  }

  it('a mode no event sets is a warning; event and mode words are reserved', () => {
    const w = at8('mode stage = 3 "stage"')
    expect(w).toEqual([{ line: 8, column: 6, endColumn: 11, severity: 'warning', message: 'mode stage never changes: no event sets it (write event … then stage = on)' }])
    expect(checkModel('state falls = 1 [m]\nfalls\' = 0\noutput y = falls [m]').diagnostics.map((d) => d.message)).toContain("'falls' is a reserved word and cannot be used as a name")
  })

  it('events need a continuous sheet', () => {
    const r = checkModel('sample 1 [s]\nstate x = 1 [1]\nmode m = off\nnext x = x\nevent x falls below 0 then m = on\noutput y = x [1]\n')
    expect(r.ok).toBe(false)
    expect(r.diagnostics.find((d) => d.line === 5)!.message).toMatch(/events need a continuous-time sheet/)
  })

  it('a clean sheet lists its modes and events in the summary', () => {
    const r = checkModel(BASE + 'event h falls below h_set then pump = on, h = 2 * h_set  "refill"\noutput level = h [m]\n')
    expect(r.ok).toBe(true)
    expect(r.summary.modes).toEqual([{ name: 'pump', initial: 0, description: '', line: 5 }])
    expect(r.summary.events).toEqual([{ condition: 'h falls below h_set', direction: 'down', assigns: ['pump', 'h'], description: 'refill', line: 8 }])
  })
})

describe('generated conditions and resets', () => {
  const SHEET = `param a = 0.7 [1] in [0, 1]
param b = 2 [m^2/s] in [0, 5]
state x = 1 [m]
state v = 3 [m/s]
mode  gate = closed
const tau = 4 [s]
dx/dt = v * (1 - gate)
dv/dt = -x / tau^2
event x * v crosses b * sin(t / tau) then v = -a * v * x * v / b, gate = open
output y = x [m]
`
  const m = compileModel(SHEET)
  it('the condition is A − B and the reset reads the values before the event', () => {
    const ef = m.eventFns!
    const x = Float64Array.of(1.3, -0.4), p = Float64Array.of(0.7, 2), u = new Float64Array(1)
    const h = new Float64Array(1), xp = new Float64Array(2)
    ef.h(2, x, p, u, h)
    expect(h[0]).toBeCloseTo(1.3 * -0.4 - 2 * Math.sin(2 / 4), 14)
    ef.resets[0].x(2, x, p, u, xp)
    expect(xp[0]).toBe(1.3)
    expect(xp[1]).toBeCloseTo(-0.7 * -0.4 * 1.3 * -0.4 / 2, 15)
    expect(m.events[0]).toMatchObject({ direction: 'either', states: [1], modes: [{ mode: 0, value: 1 }] })
  })

  it('their Jacobians agree with central differences (the exact derivatives of the generated code)', () => {
    const ef = m.eventFns!
    const x = Float64Array.of(1.3, -0.4), p = Float64Array.of(0.7, 2), u = new Float64Array(1)
    const d = 1e-6
    const fd = (f: (t: number, x: Float64Array, p: Float64Array) => number[], t: number, which: 'x' | 'p' | 't', j: number) => {
      const at = (s: number) => {
        const xx = Float64Array.from(x), pp = Float64Array.from(p)
        if (which === 'x') xx[j] += s; if (which === 'p') pp[j] += s
        return f(which === 't' ? t + s : t, xx, pp)
      }
      const a = at(d), b = at(-d)
      return a.map((v, i) => (v - b[i]) / (2 * d))
    }
    const hval = (t: number, xx: Float64Array, pp: Float64Array) => { const o = new Float64Array(1); ef.h(t, xx, pp, u, o); return [o[0]] }
    const rval = (t: number, xx: Float64Array, pp: Float64Array) => { const o = new Float64Array(2); ef.resets[0].x(t, xx, pp, u, o); return Array.from(o) }
    const hx = new Float64Array(2), hp = new Float64Array(2), ht = new Float64Array(1)
    ef.dhdx(2, x, p, u, hx); ef.dhdp(2, x, p, u, hp); ef.dhdt(2, x, p, u, ht)
    const rx = new Float64Array(4), rp = new Float64Array(4)
    ef.resets[0].dx(2, x, p, u, rx); ef.resets[0].dp(2, x, p, u, rp)
    for (let j = 0; j < 2; j++) {
      expect(hx[j]).toBeCloseTo(fd(hval, 2, 'x', j)[0], 8)
      expect(hp[j]).toBeCloseTo(fd(hval, 2, 'p', j)[0], 8)
      const cx = fd(rval, 2, 'x', j), cp = fd(rval, 2, 'p', j)
      for (let i = 0; i < 2; i++) { expect(rx[i * 2 + j]).toBeCloseTo(cx[i], 8); expect(rp[i * 2 + j]).toBeCloseTo(cp[i], 8) }
    }
    expect(ht[0]).toBeCloseTo(fd(hval, 2, 't', 0)[0], 8)
  })

  it('the equations read the mode: the gate opens at the first crossing and holds x', () => {
    const r = simulate(m, { tOut: Float64Array.of(0, 5, 10) })
    expect(r.events!.length).toBeGreaterThan(0)
    const te = r.events![0].t
    expect(m.modeValues[0]).toBe(0) // back at the start position after the run
    // with the gate open x' = 0: x stays at its value at the first event
    const again = simulate(m, { tOut: Float64Array.of(te + 1, te + 3) })
    expect(again.x[0]).toBe(again.x[2])
  })
})

describe('events inside parts and in exports', () => {
  const SUMP = `model "sump part"
input q_in = 4e-3 [m^3/s] linear
param A = 1.5 [m^2] in [0.5, 5]
const q_p = 1.2e-2 [m^3/s]
state h = 0.5 [m]
mode pump = off
dh/dt = (q_in - pump * q_p) / A
event h rises above 0.9 then pump = on
event h falls below 0.3 then pump = off
output level = h [m]
`
  const lib: ResolvePart = (hd, v) => (hd === 'sump' && v === 1 ? SUMP : null)
  it('a part keeps its events and modes under its name; two parts switch independently', () => {
    const host = `model "two sumps"
input q = 4e-3 [m^3/s] linear
part  west = sump@1
part  east = sump@1
feed  west.q_in = q
feed  east.q_in = 2 * q
output lw = west.level [m]
output le = east.level [m]
`
    const r = checkModel(host, { resolvePart: lib })
    expect(r.diagnostics.filter((d) => d.severity === 'error')).toEqual([])
    expect(r.summary.modes.map((x) => x.name)).toEqual(['west.pump', 'east.pump'])
    const c = compileModel(host, { resolvePart: lib })
    const s = simulate(c, { tOut: Float64Array.of(0, 200) })
    // east fills twice as fast: 0.4 m × 1.5 m² / 8e-3 m³/s = 75 s; west at 150 s (volume balance)
    expect(s.events!.slice(0, 2).map((e) => Math.round(e.t * 1e6) / 1e6)).toEqual([75, 150])
  })

  it('the ES module, C and FMU exports refuse a sheet with events, naming them', () => {
    const parsed = parseModel(SUMP).model!
    const model = compileModel(SUMP)
    const meta = exportMeta(model, 'sump.sheet', 'sheet values')
    for (const format of ['js', 'c', 'fmu'] as const) {
      expect(() => buildExport({ format, parsed, model, p: Float64Array.of(1.5), meta })).toThrow(/export cannot carry events: this sheet has 2 events \(line 8, 9\) and mode 'pump'/)
    }
  })
})
