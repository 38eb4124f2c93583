// The generated functions against mathjs evaluate (an independent general-purpose library):
// agreement to 1e-12 relative at seeded random points of a domain where both are real.
import { describe, expect, it } from 'vitest'
import { compileModel, parseModel, tryCompileModel, SheetError } from '../../shared/sheet/index'
import { defaultPoint, KITCHEN_SINK, mathjsReference, parsed, rng, templates, type Point } from './helpers'

function randomPoint(c: ReturnType<typeof compileModel>, r: () => number, lo: number, hi: number): Point {
  const s = () => lo + (hi - lo) * r()
  return {
    t: s(),
    x: Float64Array.from({ length: c.nx }, s),
    p: Float64Array.from({ length: c.np }, s),
    u: Float64Array.from({ length: c.nu + c.nd }, s),
  }
}

function rel(a: number, b: number) {
  return Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b), 1e-300)
}

function compareWithMathjs(text: string, pts: Point[]) {
  const c = compileModel(text)
  const m = parsed(text)
  const f = new Float64Array(c.nx)
  const g = new Float64Array(c.ny)
  let worst = 0
  for (const pt of pts) {
    c.rhs(pt.t, pt.x, pt.p, pt.u, f)
    c.outputsFn(pt.t, pt.x, pt.p, pt.u, g)
    const ref = mathjsReference(m, pt)
    ref.f.forEach((v, i) => { expect(Number.isFinite(v)).toBe(true); worst = Math.max(worst, rel(f[i], v)) })
    ref.g.forEach((v, i) => { worst = Math.max(worst, rel(g[i], v)) })
  }
  return worst
}

describe('generated code agrees with mathjs evaluate', () => {
  it('every function and operator, at 200 seeded random points in [0.1, 3]', () => {
    const c = compileModel(KITCHEN_SINK)
    const r = rng(12345)
    const pts = Array.from({ length: 200 }, () => randomPoint(c, r, 0.1, 3))
    expect(compareWithMathjs(KITCHEN_SINK, pts)).toBeLessThan(1e-12)
  })

  // indexed templates (T[i-1], sum(i in 1..N, …)) are outside what mathjs evaluates; they are
  // compared with their hand-flattened form in indexed.test.ts
  for (const { file, text } of templates().filter((x) => !x.text.includes('..'))) {
    it(`template ${file} at its own values and at 50 perturbed points`, () => {
      const c = compileModel(text)
      const base = defaultPoint(c)
      const r = rng(777)
      const pts: Point[] = [base]
      for (let k = 0; k < 50; k++) {
        const j = () => 1 + 0.2 * (r() - 0.5)
        pts.push({
          t: 10 * r(),
          // keep the domain positive and real (levels, concentrations, absolute temperatures)
          x: base.x.map((v) => (v === 0 ? 0.01 * r() : v * j())),
          p: base.p.map((v) => v * j()),
          u: base.u.map((v) => (v === 0 ? 0.01 * r() : v * j())),
        })
      }
      expect(compareWithMathjs(text, pts)).toBeLessThan(1e-12)
    })
  }

  it('out-of-domain values give NaN, not complex numbers (our NaN rule)', () => {
    const c = compileModel("state x = 1\ndx/dt = sqrt(x) + x^0.5 + log(x)\noutput y = x")
    const out = new Float64Array(1)
    c.rhs(0, new Float64Array([-1]), new Float64Array(0), new Float64Array(0), out)
    expect(Number.isNaN(out[0])).toBe(true)
  })
})

describe('compiled model', () => {
  it('index maps and sizes follow declaration order', () => {
    const c = compileModel(KITCHEN_SINK)
    expect([c.nx, c.np, c.nu, c.nd, c.ny]).toEqual([3, 3, 2, 1, 3])
    expect(c.states.map((s) => s.name)).toEqual(['x1', 'x2', 'x3'])
    expect(c.params.map((s) => s.name)).toEqual(['a', 'b', 'tau'])
    expect(c.delays).toEqual([{ input: 1, param: 2, constValue: 2 }])
    expect(c.states[0]).toMatchObject({ initial: 0.5, line: 9, estimate: false, steady: false })
    expect(c.params[1]).toMatchObject({ value: 1.3, lower: 0.1, upper: 3, fixed: false, line: 5 })
  })

  it('is cached by the hash of the text', () => {
    const a = compileModel(KITCHEN_SINK)
    const b = compileModel(KITCHEN_SINK)
    expect(b).toBe(a)
    const other = compileModel(KITCHEN_SINK + '\n# a comment changes the text')
    expect(other).not.toBe(a)
    expect(other.hash).not.toBe(a.hash)
    expect(compileModel(parseModel(KITCHEN_SINK).model!)).toBe(a)
  })

  it('computes each let once per call and allocates nothing in the generated functions', () => {
    const c = compileModel(KITCHEN_SINK)
    const rhs = /function rhs\(t,x,p,u,out\)\{([\s\S]*?)\n\}/.exec(c.source)![1]
    for (const l of ['L0', 'L1', 'L2']) expect(rhs.split(`const ${l}=`).length - 1).toBe(1)
    expect(c.source).not.toMatch(/\bnew\b|=>|\[\s*\]|\.map\(|\.slice\(|\.concat\(/)
  })

  it('user names never reach the generated source', () => {
    const c = compileModel(`param process_rate = 1 [1/s] in [0, 2]
input constructor_like = 1 [1]
state fs_require = 1 [m]
dfs_require/dt = -process_rate * fs_require * constructor_like
output globalThis_level = fs_require [m]`)
    for (const n of ['process_rate', 'constructor_like', 'fs_require', 'globalThis_level']) expect(c.source).not.toContain(n)
  })

  it('the generated source uses only the compiler\'s own identifiers', () => {
    const allowed = new Set(['use', 'strict', 'const', 'let', 'function', 'return', 'if', 'else', 'while', 'for', 'Math', 'length',
      't', 'x', 'p', 'u', 'out', 'ts', 'SPT', 'TX', 'TY', 'X', 'Y', 'n', 'v', 'lo', 'hi', 'k', 'lkv', 'lkd',
      'rhs', 'outputs', 'outputsFn', 'dfdx', 'dfdp', 'dfdu', 'dfdt', 'dgdx', 'dgdp', 'dgdu', 'd2f',
      // d2fs and dfs, the coupling term and the sensitivities' right-hand sides of all sensitivities in one call: their arguments and offsets
      'd2fs', 'dfs', 'vt', 'ns', 'j', 'o', 'po', 'uo',
      // modes (M) and the event functions: conditions ev…, resets r<k>…
      'M', 'events', 'h', 'dhdx', 'dhdp', 'dhdu', 'dhdt', 'resets', 'dx', 'dp', 'du', 'dt', 'ev', 'evx', 'evp', 'evu', 'evt',
      'sin', 'cos', 'tan', 'asin', 'acos', 'atan', 'atan2', 'sinh', 'cosh', 'tanh', 'exp', 'log', 'log10', 'sqrt', 'abs', 'sign', 'min', 'max', 'floor', 'ceil', 'pow', 'hypot'])
    for (const text of [KITCHEN_SINK, ...templates().map((t) => t.text)]) {
      const src = compileModel(text).source
      const ids = new Set(src.replace(/(?<![A-Za-z_$0-9])\d+(\.\d+)?(e[+-]?\d+)?/g, ' ').match(/[A-Za-z_$][A-Za-z0-9_$]*/g))
      for (const id of ids) expect(allowed.has(id) || /^[LDXY]\d+$/.test(id) || /^r\d+[xput]?$/.test(id), id).toBe(true)
    }
  })

  it('compileModel throws a SheetError with the diagnostics; tryCompileModel does not throw', () => {
    expect(() => compileModel("state x = 1\ndx/dt = y")).toThrow(SheetError)
    try { compileModel("state x = 1\ndx/dt = y") } catch (e) { expect((e as SheetError).diagnostics.find((d) => d.severity === 'error')).toMatchObject({ line: 2, message: "unknown name 'y'" }) }
    const r = tryCompileModel("state x = 1\ndx/dt = y")
    expect(r.compiled).toBeNull()
    expect(r.diagnostics.length).toBeGreaterThan(0)
  })

  it('a discrete sheet returns x(k+1) and its sample time in sheet units', () => {
    const c = compileModel(`time [min]
sample 30 [s]
input u = 1 [W] hold
param a = 0.9 [1] in [0, 1]
param b = 0.5 [K/W] in [0, 2]
state y = 280 [K]
next y = a * y + b * u
output temp = y [K]`)
    expect(c.kind).toBe('discrete')
    expect(c.sampleTime).toBe(0.5)
    const out = new Float64Array(1)
    c.rhs(0, new Float64Array([280]), new Float64Array([0.9, 0.5]), new Float64Array([2]), out)
    expect(out[0]).toBeCloseTo(0.9 * 280 + 0.5 * 2, 12)
    const j = new Float64Array(1)
    c.dfdx(0, new Float64Array([280]), new Float64Array([0.9, 0.5]), new Float64Array([2]), j)
    expect(j[0]).toBe(0.9)
  })

  it('delay slots: one per (input, tau) pair, read from u[nu + k]', () => {
    const c = compileModel(`input a = 1 [1]
input b = 2 [1]
param tau = 3 [s] in [0, 10]
const tau2 = 5 [min]
state x = 0 [1]
dx/dt = (delay(a, tau) + delay(a, tau) + delay(b, tau) + delay(a, tau2) + a) / tau
output y = x`)
    expect(c.delays).toEqual([{ input: 0, param: 0, constValue: 3 }, { input: 1, param: 0, constValue: 3 }, { input: 0, param: null, constValue: 300 }])
    const out = new Float64Array(1)
    const u = new Float64Array([1, 2, 10, 20, 30])
    c.rhs(0, new Float64Array([0]), new Float64Array([3]), u, out)
    expect(out[0]).toBeCloseTo((10 + 10 + 20 + 30 + 1) / 3, 12)
    const du = new Float64Array(5)
    c.dfdu(0, new Float64Array([0]), new Float64Array([3]), u, du)
    expect(Array.from(du)).toEqual([1 / 3, 0, 2 / 3, 1 / 3, 1 / 3])
  })
})
