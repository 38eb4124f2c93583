// The smooth switches and limits: values against their closed forms, exact Jacobians against
// central finite differences at seeded pseudo-random points (synthetic), and the warning that
// points from a comparison on a fitted parameter to them.
import { describe, expect, it } from 'vitest'
import { checkModel, compileModel } from '../../shared/sheet/index'
import { analytic, centralDifferences, maxRelDiff, rng } from './helpers'

// every parameter is fitted and reaches the smooth functions through every argument slot
const SMOOTH_SHEET = `model "smooth switches"
param h  = 0.5 [m] in [0, 2]
param w  = 0.2 [m] in [0.01, 1]
param lo = 0.2 [m] in [0, 1]
param hi = 1.5 [m] in [1, 3]
param k  = 0.3 [1/s] in [0, 2]
const m1 = 1 [m]
input q = 0.1 [m/s]
state x = 0.4 [m]
state y = 0.9 [m]
let gate = soft_step(x, h, w)
dx/dt = q * soft_switch(y, h, w, 0.5, 2) - k * soft_clamp(x, lo, hi, w) + k * gate * m1
dy/dt = k * (soft_max(x, h, w) - soft_min(y, lo, w))
output level = soft_clamp(y, lo, hi, w) [m]`

function valueOf(expr: string, x: number): number {
  const c = compileModel(`state x = 1 [m]\nconst c0 = 0 [m]\nconst c1 = 1 [m]\nconst w = 0.2 [m]\ndx/dt = 0\noutput o = ${expr} [1]`)
  const y = new Float64Array(1)
  c.outputsFn(0, new Float64Array([x]), new Float64Array(0), new Float64Array(0), y)
  return y[0]
}

describe('smooth switches and limits', () => {
  it('have the closed-form values', () => {
    // tanh(1) = 0.761594155955765 (Abramowitz and Stegun 4.5.x; value as computed by Math.tanh)
    expect(valueOf('soft_step(x, c1, w)', 1)).toBeCloseTo(0.5, 14)
    expect(valueOf('soft_step(x, c1, w)', 1.1)).toBeCloseTo(0.5 + 0.5 * Math.tanh(1), 14)
    expect(valueOf('soft_step(x, c1, w)', 3)).toBeCloseTo(1, 12)
    expect(valueOf('soft_step(x, c1, w)', -1)).toBeCloseTo(0, 12)
    // soft_max(a, b, width) = (a + b + sqrt((a-b)^2 + width^2)) / 2: at a tie it is a + width/2
    expect(valueOf('soft_max(x, c1, w) / c1', 1)).toBeCloseTo(1.1, 14)
    expect(valueOf('soft_min(x, c1, w) / c1', 1)).toBeCloseTo(0.9, 14)
    expect(valueOf('soft_max(x, c1, w) / c1', 3)).toBeCloseTo((4 + Math.hypot(2, 0.2)) / 2, 14)
    // soft_clamp is soft_min(soft_max(x, lo, width), hi, width): mid-range it follows x, beyond the
    // limits it flattens to them (within about width²/(4 (hi - lo)))
    const smax = (a: number, b: number, w: number) => (a + b + Math.hypot(a - b, w)) / 2
    const smin = (a: number, b: number, w: number) => (a + b - Math.hypot(a - b, w)) / 2
    for (const x of [-50, -0.1, 0, 0.3, 0.5, 0.95, 1, 2, 50]) expect(valueOf('soft_clamp(x, c0, c1, w) / c1', x)).toBeCloseTo(smin(smax(x, 0, 0.2), 1, 0.2), 14)
    expect(valueOf('soft_clamp(x, c0, c1, w) / c1', 0.5)).toBeCloseTo(0.5, 1)
    expect(Math.abs(valueOf('soft_clamp(x, c0, c1, w) / c1', 50) - 1)).toBeLessThan(0.2 ** 2 / 4)
    expect(Math.abs(valueOf('soft_clamp(x, c0, c1, w) / c1', -50))).toBeLessThan(0.2 ** 2 / 4)
    expect(valueOf('soft_switch(x, c1, w, 3, 7)', 40)).toBeCloseTo(7, 12)
    expect(valueOf('soft_switch(x, c1, w, 3, 7)', 1)).toBeCloseTo(5, 12)
  })

  it('compile to Jacobians that agree with central finite differences', () => {
    const c = compileModel(SMOOTH_SHEET)
    const r = rng(1818)
    for (let k = 0; k < 50; k++) {
      const s = (a: number, b: number) => a + (b - a) * r()
      const pt = { t: 0, x: new Float64Array([s(0, 2), s(0, 2)]), p: new Float64Array([s(0.2, 1.5), s(0.05, 0.8), s(0.1, 0.6), s(1, 2), s(0.1, 1)]), u: new Float64Array([s(0, 1)]) }
      for (const of of ['f', 'g'] as const) {
        for (const w of ['x', 'p', 'u'] as const) {
          const a = analytic(c, pt, w, of)
          const fd = centralDifferences(c, pt, w, of)
          const floor = Math.max(1e-12, ...Array.from(a, Math.abs)) * 1e-4
          expect(maxRelDiff(a, fd, floor), `d${of}/d${w} at point ${k}`).toBeLessThan(1e-5)
        }
      }
    }
  })

  it('give a nonzero slope with respect to the threshold, where a comparison gives none', () => {
    const sheet = (rhs: string) => `param h = 0.5 [m] in [0, 1]\nconst w = 0.1 [m]\nconst r = 1 [m/s]\nstate x = 0.45 [m]\ndx/dt = ${rhs}\noutput o = x [m]`
    const slope = (text: string) => {
      const c = compileModel(text)
      const out = new Float64Array(1)
      c.dfdp(0, new Float64Array([0.45]), new Float64Array([0.5]), new Float64Array(0), out)
      return out[0]
    }
    expect(slope(sheet('x >= h ? r : -r'))).toBe(0)
    // d/dh of r (2 soft_step - 1) = 2 r · 1/2 (1 - tanh²(z)) · (-2/w) with z = 2 (x - h)/w = -1
    expect(slope(sheet('soft_switch(x, h, w, -r, r)'))).toBeCloseTo(-2 * (1 - Math.tanh(-1) ** 2) / 0.1, 10)
  })

  it('take a fixed number of arguments and like units', () => {
    const bad = checkModel('state x = 1 [m]\nconst w = 1 [s]\nx\' = 0\noutput o = soft_max(x, 1) [m]').diagnostics
    expect(bad.some((d) => d.line === 4 && /soft_max takes 3 arguments, got 2: soft_max\(a, b, width\)/.test(d.message))).toBe(true)
    const units = checkModel('state x = 1 [m]\nconst w = 1 [s]\nx\' = 0\noutput o = soft_max(x, 1, w) [m]').diagnostics
    expect(units.some((d) => d.severity === 'error' && d.line === 4 && /unlike units: m and s/.test(d.message))).toBe(true)
  })
})

describe('the warning on fitted parameters inside comparisons', () => {
  it('points at the comparison, through lets too, and names the smooth alternatives', () => {
    const text = `param h = 0.5 [m] in [0, 1]\nparam k = 1 [1/s] in [0, 5]\nparam z = 0.1 [m] fixed\nstate x = 0.2 [m]\nlet hh = 2 * h\nlet on = x >= hh ? 1 : 0\ndx/dt = k * (on * z - x) + (x < z) * k * z\noutput o = x [m]`
    const r = checkModel(text)
    expect(r.ok).toBe(true)
    const warnings = r.diagnostics.filter((d) => /comparison has zero slope/.test(d.message))
    // line 6 holds `x >= hh` (hh depends on h); line 7's `x < z` only involves a fixed param
    expect(warnings).toHaveLength(1)
    expect(warnings[0]).toMatchObject({ line: 6, severity: 'warning', column: 10, endColumn: 17 })
    expect(warnings[0].message).toMatch(/'h'/)
    expect(warnings[0].message).toMatch(/soft_step/)
    expect(warnings[0].message).toMatch(/soft_clamp/)
  })
})
