import { checkModel, compileModel, type CompiledModel, type Diagnostic } from '../../shared/sheet/index'
import { defaultPoint, interpClamped, type Point } from '../../fixtures/sheet/reference'
import { MODELS_DIR, templates } from '../../fixtures/sheet/templates'

export { MODELS_DIR, templates }

export function errors(text: string): Diagnostic[] {
  return checkModel(text).diagnostics.filter((d) => d.severity === 'error')
}

/** Seeded pseudo-random numbers (the engine's mulberry32; synthetic test data). */
export { mulberry32 as rng } from '../../shared/engine/random'

export { defaultPoint, type Point }

type Which = 'x' | 'p' | 'u' | 't'
/**
 * Central finite differences of rhs (or outputs) with respect to one group of variables:
 * (f(v + h) - f(v - h)) / 2h, h = 1e-6 (|v| + 1e-3) (common practice, no source).
 */
export function centralDifferences(c: CompiledModel, pt: Point, which: Which, of: 'f' | 'g'): Float64Array {
  const fn = of === 'f' ? c.rhs : c.outputsFn
  const nrow = of === 'f' ? c.nx : c.ny
  const ncol = which === 'x' ? c.nx : which === 'p' ? c.np : which === 'u' ? c.nu + c.nd : 1
  const out = new Float64Array(nrow * ncol)
  const fp = new Float64Array(nrow)
  const fm = new Float64Array(nrow)
  for (let j = 0; j < ncol; j++) {
    const x = Float64Array.from(pt.x), p = Float64Array.from(pt.p), u = Float64Array.from(pt.u)
    const v = which === 'x' ? x : which === 'p' ? p : which === 'u' ? u : null
    const base = v ? v[j] : pt.t
    const h = 1e-6 * (Math.abs(base) + 1e-3)
    if (v) v[j] = base + h
    fn(v ? pt.t : pt.t + h, x, p, u, fp)
    if (v) v[j] = base - h
    fn(v ? pt.t : pt.t - h, x, p, u, fm)
    for (let i = 0; i < nrow; i++) out[i * ncol + j] = (fp[i] - fm[i]) / (2 * h)
  }
  return out
}

export function analytic(c: CompiledModel, pt: Point, which: Which, of: 'f' | 'g'): Float64Array {
  const nrow = of === 'f' ? c.nx : c.ny
  const ncol = which === 'x' ? c.nx : which === 'p' ? c.np : which === 'u' ? c.nu + c.nd : 1
  const out = new Float64Array(nrow * ncol).fill(NaN)
  const fn = of === 'f'
    ? { x: c.dfdx, p: c.dfdp, u: c.dfdu, t: c.dfdt }[which]
    : { x: c.dgdx, p: c.dgdp, u: c.dgdu, t: null }[which]
  if (!fn) throw new Error('no dg/dt in the contract')
  fn(pt.t, pt.x, pt.p, pt.u, out)
  return out
}

/** max over entries of |a - b| / (|a| + |b| + floor) */
export function maxRelDiff(a: Float64Array, b: Float64Array, floor: number): number {
  let m = 0
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]) / (Math.abs(a[i]) + Math.abs(b[i]) + floor))
  return m
}

export { compileModel, checkModel }

import { evaluate as mjEvaluate, parse as mjParse } from 'mathjs'
import { parseModel, type ParsedModel } from '../../shared/sheet/index'

/**
 * The right sides and outputs evaluated by mathjs (`parse(text).evaluate(scope)`) from the sheet's
 * own expression texts, with every symbol given its internal SI value: the reference the
 * generated code is compared with.
 */
export function mathjsReference(m: ParsedModel, pt: Point): { f: number[]; g: number[] } {
  const scope: Record<string, unknown> = {}
  m.states.forEach((s, i) => (scope[s.name] = pt.x[i]))
  m.params.forEach((s, i) => (scope[s.name] = pt.p[i]))
  m.inputs.forEach((s, i) => (scope[s.name] = pt.u[i]))
  m.consts.forEach((s) => (scope[s.name] = s.value))
  // modes read their current position: the initial one outside a simulation
  m.modes.forEach((s) => (scope[s.name] = s.initial))
  m.lookups.forEach((l) => (scope[l.name] = (v: number) => interpClamped(l.xs, l.ys, v)))
  scope.t = pt.t * m.secondsPerTimeUnit
  scope.delay = (uv: number, tauv: number) => {
    const k = m.delays.findIndex((d) => pt.u[d.input] === uv && (d.param !== null ? pt.p[d.param] : d.constValue) === tauv)
    if (k < 0) throw new Error('delay slot not found')
    return pt.u[m.inputs.length + k]
  }
  const num = (v: unknown) => (typeof v === 'boolean' ? (v ? 1 : 0) : (v as number))
  for (const i of m.letOrder) scope[m.lets[i].name] = num(mjParse(m.lets[i].text).evaluate(scope))
  const f = m.equations.map((q) => q.timeFactor * num(mjEvaluate(q.text, scope)))
  const g = m.outputs.map((o) => num(mjEvaluate(o.text, scope)))
  return { f, g }
}

export function parsed(text: string): ParsedModel {
  const r = parseModel(text)
  if (!r.model) throw new Error(JSON.stringify(r.diagnostics))
  return r.model
}

/** every whitelisted function and operator (no units: the values are plain numbers) */
export const KITCHEN_SINK = `model "every function"
input u1 = 1
input u2 = 2
param a = 0.7 in [0.1, 2]
param b = 1.3 in [0.1, 3]
param tau = 2 in [0, 5]
const c1 = 0.25
lookup tab = { 0: 0, 1: 2, 2: 3, 4: 3.5 }
state x1 = 0.5
state x2 = 1.5
state x3 = 0.8
let s = sin(x1) + cos(x2) + tan(0.3*x3)
let h = asin(0.5*x1/(1+x1)) + acos(0.4*x3/(1+x3)) + atan(x2) + atan2(x1, x2)
let hy = sinh(0.2*x1) + cosh(0.1*x2) + tanh(x3) + hypot(x1, x2, a)
dx1/dt = -a*x1 + exp(-x2) + log(1+x3) + log10(2+x1) + sqrt(x2) + s*c1 + pow(x3, b) + x1^2.5 + x2^b + a^x3
dx2/dt = abs(x1 - 0.5) - max(x1, x2) + min(x3, u1, 2) + sign(x1 - 1) + floor(3*x2) + ceil(x3) + (x1 > x2 ? h : hy) + tab(x2)
dx3/dt = delay(u2, tau) * (x1 <= x3) - b*x3/(1 + x1*x2) + t*0.01 + pi/10 + e/10 + (x1 >= 0.3) + (x2 == x2) - (x1 != x1) + (x2 < 1) - -x3
output y1 = x1 + hy
output y2 = h * u1 * delay(u2, tau)
output y3 = t`
