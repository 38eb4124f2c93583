// Every Jacobian of the generated code against central finite differences (and the smooth rules
// also against mathjs `derivative`, an independent symbolic differentiator). Points are seeded
// pseudo-random (synthetic) and kept away from the kinks of the non-smooth functions.
import { derivative as mjDerivative } from 'mathjs'
import { describe, expect, it } from 'vitest'
import { compileModel, type CompiledModel } from '../../shared/sheet/index'
import { analytic, centralDifferences, defaultPoint, KITCHEN_SINK, maxRelDiff, rng, templates, type Point } from './helpers'

function checkAll(c: CompiledModel, pt: Point, tol = 1e-6) {
  const groups = ['x', 'p', 'u', 't'] as const
  for (const of of ['f', 'g'] as const) {
    for (const w of groups) {
      if (of === 'g' && w === 't') continue
      const a = analytic(c, pt, w, of)
      const fd = centralDifferences(c, pt, w, of)
      // entries are compared relative to the size of the row's largest entry
      const floor = Math.max(1e-12, ...Array.from(a, Math.abs)) * 1e-4
      expect(a.every((v) => !Number.isNaN(v)), `${of}/${w} has NaN`).toBe(true)
      expect(maxRelDiff(a, fd, floor), `d${of}/d${w}`).toBeLessThan(tol)
    }
  }
}

describe('Jacobians agree with central finite differences', () => {
  it('every function and operator, at 100 seeded random points', () => {
    const c = compileModel(KITCHEN_SINK)
    const r = rng(99)
    let tested = 0
    for (let k = 0; k < 100; k++) {
      const s = () => 0.1 + 2.9 * r()
      const pt: Point = { t: s(), x: Float64Array.from({ length: 3 }, s), p: Float64Array.from({ length: 3 }, s), u: Float64Array.from({ length: 3 }, s) }
      const [x1, x2, x3] = pt.x
      // away from kinks: |x1 - 0.5|, x1 vs x2, x3 vs u1, x1 - 1, floor(3 x2), ceil(x3), lookup break points, comparisons
      const kinks = [x1 - 0.5, x1 - x2, x3 - pt.u[0], x3 - 2, x1 - 1, 3 * x2 - Math.round(3 * x2), x3 - Math.round(x3), x2 - 1, x2 - 2, x1 - x3, x1 - 0.3]
      if (kinks.some((d) => Math.abs(d) < 1e-3)) continue
      checkAll(c, pt, 1e-5) // central differences are good to about 1e-6..1e-5 here
      tested++
    }
    expect(tested).toBeGreaterThan(80)
  })

  for (const { file, text } of templates()) {
    it(`template ${file}`, () => {
      const c = compileModel(text)
      const base = defaultPoint(c)
      const r = rng(4242)
      for (let k = 0; k < 20; k++) {
        const j = () => 1 + 0.2 * (r() - 0.5)
        checkAll(c, { t: 5 * r(), x: base.x.map((v) => (v === 0 ? 1e-3 * (1 + r()) : v * j())), p: base.p.map((v) => v * j()), u: base.u.map((v) => (v === 0 ? 0.1 * (1 + r()) : v * j())) })
      }
    })
  }
})

describe('our own derivative rules', () => {
  const one = (expr: string) => compileModel(`state x = 1\nstate y = 1\ndx/dt = ${expr}\ndy/dt = 0\noutput o = x`)
  const dfdx = (c: CompiledModel, x: number, y: number) => {
    const out = new Float64Array(4)
    c.dfdx(0, new Float64Array([x, y]), new Float64Array(0), new Float64Array(0), out)
    return [out[0], out[1]]
  }
  const fd = (c: CompiledModel, x: number, y: number) => {
    const pt = { t: 0, x: new Float64Array([x, y]), p: new Float64Array(0), u: new Float64Array(0) }
    const d = centralDifferences(c, pt, 'x', 'f')
    return [d[0], d[1]]
  }
  const cases: { expr: string; pts: [number, number][]; want?: [number, number][] }[] = [
    { expr: 'abs(x)', pts: [[-2, 0], [3, 0]], want: [[-1, 0], [1, 0]] },
    { expr: 'max(x, y)', pts: [[2, 1], [0.5, 1]], want: [[1, 0], [0, 1]] },
    { expr: 'min(x, y)', pts: [[2, 1], [0.5, 1]], want: [[0, 1], [1, 0]] },
    { expr: 'max(x*x, 3*y)', pts: [[2, 1], [1, 2]], want: [[4, 0], [0, 3]] },
    { expr: 'sign(x) * y', pts: [[-2, 3], [2, 3]], want: [[0, -1], [0, 1]] },
    { expr: 'floor(x) + ceil(y)', pts: [[1.5, 2.5]], want: [[0, 0]] },
    { expr: '(x > y) + (x <= 2*y) + (x == y) + (x != y)', pts: [[1.5, 0.5]], want: [[0, 0]] },
    { expr: 'x > y ? x*x : y*y*y', pts: [[2, 1], [1, 2]], want: [[4, 0], [0, 12]] },
    { expr: 'atan2(y, x)', pts: [[1, 2], [-1, 0.5], [-2, -1]] },
    { expr: 'hypot(x, y)', pts: [[3, 4], [-1, 2]], want: [[0.6, 0.8], [-1 / Math.sqrt(5), 2 / Math.sqrt(5)]] },
    { expr: 'tan(x)', pts: [[0.3, 0], [-1.2, 0]], want: [[1 / Math.cos(0.3) ** 2, 0], [1 / Math.cos(-1.2) ** 2, 0]] },
    { expr: 'pow(x, y)', pts: [[2, 3], [0.5, 1.5]] },
    { expr: 'x^y', pts: [[2, 3]], want: [[12, 8 * Math.log(2)]] },
  ]
  for (const cs of cases) {
    it(`d/dx, d/dy of ${cs.expr}`, () => {
      const c = one(cs.expr)
      cs.pts.forEach(([x, y], k) => {
        const a = dfdx(c, x, y)
        const f = fd(c, x, y)
        for (let i = 0; i < 2; i++) expect(Math.abs(a[i] - f[i])).toBeLessThan(1e-6 * (1 + Math.abs(f[i])))
        if (cs.want) for (let i = 0; i < 2; i++) expect(a[i]).toBeCloseTo(cs.want[k][i], 12)
      })
    })
  }

  it('abs at its kink takes 0 (the rule we chose), sign/floor/ceil jumps take 0', () => {
    expect(dfdx(one('abs(x)'), 0, 0)[0]).toBe(0)
    expect(dfdx(one('floor(x)'), 2, 0)[0]).toBe(0)
    expect(dfdx(one('sign(x)'), 0, 0)[0]).toBe(0)
  })

  it('max/min on a tie take the first argument', () => {
    expect(dfdx(one('max(x, y)'), 1, 1)).toEqual([1, 0])
    expect(dfdx(one('min(2*x, y)'), 1, 2)).toEqual([2, 0])
  })

  it('a lookup has the slope of its active segment and 0 outside the table', () => {
    const c = compileModel(`lookup f = { 0: 0, 1: 2, 3: 3 }\nstate x = 1\nstate y = 1\ndx/dt = f(x)\ndy/dt = 0\noutput o = x`)
    expect(dfdx(c, 0.5, 0)[0]).toBe(2)
    expect(dfdx(c, 2, 0)[0]).toBe(0.5)
    expect(dfdx(c, -1, 0)[0]).toBe(0)
    expect(dfdx(c, 5, 0)[0]).toBe(0)
    for (const x of [0.3, 1.7, 2.9]) expect(dfdx(c, x, 0)[0]).toBeCloseTo(fd(c, x, 0)[0], 6)
    const v = new Float64Array(2)
    c.rhs(0, new Float64Array([2, 0]), new Float64Array(0), new Float64Array(0), v)
    expect(v[0]).toBe(2.5)
    c.rhs(0, new Float64Array([9, 0]), new Float64Array(0), new Float64Array(0), v)
    expect(v[0]).toBe(3) // clamped
  })

  // smooth rules against mathjs derivative (independent symbolic differentiation)
  const smooth = ['sin(x)', 'cos(x)', 'tan(x)', 'asin(x/2)', 'acos(x/2)', 'atan(x)', 'sinh(x)', 'cosh(x)', 'tanh(x)', 'exp(x)', 'log(x)', 'log10(x)', 'sqrt(x)', 'x^3', 'x^2.5', '1/x', 'x*exp(-x)', '2^x']
  for (const e of smooth) {
    it(`${e} agrees with mathjs derivative`, () => {
      const c = one(e)
      const d = mjDerivative(e, 'x')
      for (const x of [0.3, 0.9, 1.7]) expect(dfdx(c, x, 1)[0]).toBeCloseTo(d.evaluate({ x }) as number, 11)
    })
  }
})
