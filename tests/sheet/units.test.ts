// Unit check and unit conversion of the sheet language.
import { describe, expect, it } from 'vitest'
import { checkModel, compileModel } from '../../shared/sheet/index'
import { parseUnit } from '../../shared/sheet/units'
import { errors } from './helpers'

describe('unit conversion to internal SI', () => {
  const cases: [string, number, number, string][] = [
    // [unit, scale, offset, source]
    ['degC', 1, 273.15, 'BIPM SI Brochure, 9th ed. 2019, sec. 2.3.1: t/degC = T/K - 273.15'],
    ['degF', 5 / 9, 459.67 * 5 / 9, 'NIST SP 811 (2008), B.8: T/K = (t/degF + 459.67)/1.8'],
    ['bar', 1e5, 0, 'NIST SP 811 (2008), table 8: 1 bar = 100 kPa'],
    ['h', 3600, 0, 'BIPM SI Brochure 2019, table 8'],
    ['min', 60, 0, 'BIPM SI Brochure 2019, table 8'],
    ['L', 1e-3, 0, 'BIPM SI Brochure 2019, table 8: 1 L = 1 dm^3'],
    ['Ah', 3600, 0, '1 A*h = 3600 C (common practice, no source)'],
    ['kJ/mol', 1000, 0, 'SI prefix kilo, BIPM SI Brochure 2019, table 7'],
    ['m^3/h', 1 / 3600, 0, 'derived from the hour'],
    ['g/L', 1, 0, '1 g/L = 1 kg/m^3 (derived)'],
    ['%', 0.01, 0, 'ISO 80000-1:2009, percent = 0.01'],
    ['1', 1, 0, 'dimensionless'],
  ]
  for (const [u, scale, offset, src] of cases) {
    it(`${u}: scale ${scale}, offset ${offset} (${src})`, () => {
      const r = parseUnit(u)
      expect(r.ok).toBe(true)
      if (!r.ok) return
      expect(r.unit.scale).toBeCloseTo(scale, 12)
      expect(r.unit.offset).toBeCloseTo(offset, 9)
    })
  }

  it('compiled symbols carry their unit map, and values are converted', () => {
    const c = compileModel(`time [min]
input T_in = 20 [degC]
param k = 0.5 [1/min] in [0, 10]
param V = 200 [L] fixed
state T = 68 [degF]
dT/dt = k * (T_in - T)
output temp = T [degC]
output vol = V [m^3]`)
    expect(c.secondsPerTimeUnit).toBe(60)
    expect(c.inputs[0]).toMatchObject({ unit: 'degC', scale: 1, offset: 273.15, value: 293.15 })
    expect(c.params[0].value).toBeCloseTo(0.5 / 60, 15)
    expect(c.params[1].value).toBeCloseTo(0.2, 15)
    // 68 degF = 20 degC = 293.15 K (NIST SP 811 (2008), B.8)
    expect(c.states[0].initial).toBeCloseTo(293.15, 10)
    expect(c.outputs[0]).toMatchObject({ unit: 'degC', scale: 1, offset: 273.15 })
  })
})

describe('derivatives are per sheet time unit', () => {
  it('a sheet in hours with rates in 1/h', () => {
    const c = compileModel(`time [h]
param mu = 0.5 [1/h] in [0, 2]
state X = 1 [g/L]
dX/dt = mu * X
output b = X`)
    const out = new Float64Array(1)
    c.rhs(0, new Float64Array([1]), new Float64Array([c.params[0].value]), new Float64Array(0), out)
    expect(out[0]).toBeCloseTo(0.5, 14) // 0.5 g/L per hour, and 1 g/L = 1 kg/m^3
    const j = new Float64Array(1)
    c.dfdp(0, new Float64Array([1]), new Float64Array([c.params[0].value]), new Float64Array(0), j)
    expect(j[0]).toBeCloseTo(3600, 9) // d(rhs)/d(mu_SI), mu_SI in 1/s
  })

  it('a sheet in minutes with a rate in 1/s', () => {
    const c = compileModel(`time [min]
param k = 0.1 [1/s] in [0, 2]
state x = 1 [m]
dx/dt = -k * x
output y = x`)
    const out = new Float64Array(1)
    c.rhs(0, new Float64Array([2]), new Float64Array([0.1]), new Float64Array(0), out)
    expect(out[0]).toBeCloseTo(-12, 12) // -0.1 /s * 2 m * 60 s/min
  })

  it('the time t is in sheet units and reaches expressions in seconds', () => {
    const c = compileModel(`time [h]
const s_one = 1 [s]
param a = 1 [m/s^2] fixed
state v = 0 [m/s]
dv/dt = a * t / s_one
output y = v`)
    const out = new Float64Array(1)
    c.rhs(2, new Float64Array([0]), new Float64Array([1]), new Float64Array(0), out)
    // a t / 1 s at t = 2 h: 7200 m/s^2 ... per hour: 7200 * 3600
    expect(out[0]).toBeCloseTo(7200 * 3600, 6)
    const dt = new Float64Array(1)
    c.dfdt(2, new Float64Array([0]), new Float64Array([1]), new Float64Array(0), dt)
    expect(dt[0]).toBeCloseTo(3600 * 3600, 6)
  })

  it('symbols without units are taken as they are written (no time scaling)', () => {
    const c = compileModel(`time [h]
param k = 0.5 in [0, 1]
state x = 1
dx/dt = -k * x
output y = x`)
    const out = new Float64Array(1)
    c.rhs(0, new Float64Array([1]), new Float64Array([0.5]), new Float64Array(0), out)
    expect(out[0]).toBe(-0.5)
  })
})

describe('unit check', () => {
  const wrong = `model "vessel"
param A = 1.2 [m^2] fixed
param Cv = 4e-3 [m^2.5/s] in [1e-4, 1e-1]
input q_in = 2e-3 [m^3/s]
state h = 0.8 [m]
dh/dt = q_in - Cv * sqrt(max(h, 0))
output level = h [m]`
  const right = wrong.replace("dh/dt = q_in - Cv * sqrt(max(h, 0))", "dh/dt = (q_in - Cv * sqrt(max(h, 0))) / A")

  it('a unit-wrong sheet fails with the unit found and the unit expected; its corrected twin passes', () => {
    const errs = errors(wrong)
    expect(errs).toHaveLength(1)
    expect(errs[0]).toMatchObject({ line: 6, column: 9 })
    expect(errs[0].message).toBe("unit mismatch: the left side dh/dt is in m/s (h in m, per s), the right side in m^3/s")
    const ok = checkModel(right)
    expect(ok.ok).toBe(true)
    expect(ok.diagnostics).toEqual([])
  })

  it('a sum of unlike units', () => {
    const errs = errors(wrong.replace("dh/dt = q_in - Cv * sqrt(max(h, 0))", "dh/dt = (q_in - h) / A"))
    expect(errs.some((e) => e.line === 6 && /difference of unlike units: m\^3\/s and m/.test(e.message))).toBe(true)
  })

  it('exp, log and trig need dimensionless arguments', () => {
    for (const f of ['exp', 'log', 'sin', 'tanh']) {
      const errs = errors(wrong.replace("dh/dt = q_in - Cv * sqrt(max(h, 0))", `dh/dt = q_in / A * ${f}(h)`))
      expect(errs.some((e) => new RegExp(`argument of ${f} must be dimensionless, found m`).test(e.message)), f).toBe(true)
    }
    // h / 1.5 still has unit m; h / h0 is dimensionless
    expect(errors(right.replace('sqrt(max(h, 0))', 'sqrt(max(h, 0)) * exp(h / 1.5)')).some((e) => /argument of exp must be dimensionless, found m/.test(e.message))).toBe(true)
    expect(errors(right.replace('sqrt(max(h, 0))', 'sqrt(max(h, 0)) * exp(h / h0)').replace('state h', 'const h0 = 1.5 [m]\nstate h'))).toEqual([])
  })

  it('outputs must have their declared unit', () => {
    const errs = errors(right.replace('output level = h [m]', 'output level = h * A [m]'))
    expect(errs).toEqual([expect.objectContaining({ line: 7, column: 16, endColumn: 21, message: 'unit mismatch: the left side output level is in m (as declared), the right side in m^3' })])
    expect(errors(right.replace('output level = h [m]', 'output level = h [mm]'))).toEqual([])
  })

  it('comparisons and the branches of ?: need like units', () => {
    expect(errors(right.replace('max(h, 0)', '(h > q_in ? h : 0)')).some((e) => /comparison of unlike units: m and m\^3\/s/.test(e.message))).toBe(true)
    expect(errors(right.replace('max(h, 0)', '(h > 0 ? h : A)')).some((e) => /^the two branches of \?: have unlike units: m and m\^2$/.test(e.message))).toBe(true)
  })

  it('a bare number adapts to the unit it meets', () => {
    expect(errors(right.replace('max(h, 0)', 'max(h, 0) + 0.01 - 1e-3'))).toEqual([])
  })

  it('a power of a quantity needs a plain-number exponent', () => {
    expect(errors(right.replace('sqrt(max(h, 0))', 'max(h, 0)^0.5'))).toEqual([])
    expect(errors(right.replace('sqrt(max(h, 0))', 'max(h, 0)^(1/2)'))).toEqual([])
    expect(errors(right.replace('sqrt(max(h, 0))', 'max(h, 0)^h')).some((e) => /exponent/.test(e.message))).toBe(true)
  })

  it('symbols declared without a unit skip the check', () => {
    const text = wrong.replace('param Cv = 4e-3 [m^2.5/s]', 'param Cv = 4e-3').replace("dh/dt = q_in - Cv * sqrt(max(h, 0))", "dh/dt = (q_in - Cv * sqrt(max(h, 0))) / A")
    expect(errors(text)).toEqual([])
  })

  it('lookups check their argument and give their result unit', () => {
    const base = `lookup f [m] -> [m^3/s] = { 0: 0, 1: 1e-3 }
param A = 1 [m^2] fixed
state h = 1 [m]
dh/dt = (1e-3 - f(ARG)) / A
output y = h`
    expect(errors(base.replace('ARG', 'h'))).toEqual([])
    expect(errors(base.replace('ARG', 'A')).some((e) => /^lookup f expects an argument in m, found m\^2$/.test(e.message))).toBe(true)
  })

  it('a literal meeting a non-SI quantity is flagged as read in SI', () => {
    const r = checkModel(`state T = 20 [degC]
param k = 0.01 [1/s] in [0, 1]
dT/dt = k * (max(T, 300) - T)
output y = T`)
    expect(r.ok).toBe(true)
    expect(r.diagnostics.some((d) => d.severity === 'warning' && /read in SI units/.test(d.message))).toBe(true)
  })
})
