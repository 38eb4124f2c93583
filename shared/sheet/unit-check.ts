/**
 * Dimensional check of every expression (mathjs units give each declared symbol its dimension
 * vector; see units.ts). Rules: sums, differences, comparisons, min/max/hypot/atan2 and the two
 * branches of ?: need like units; exp/log/trig/hyperbolic arguments are dimensionless; a power of a
 * quantity needs a plain-number exponent; a bare number adapts to the unit it meets; a symbol
 * without a unit makes its part of the check unknown (skipped).
 *
 * Beside its dimensions, each unit carries the form the sheet declared it in (the unit names as
 * written, with powers: `V`, `m^3/s`), so a mismatch is reported in the sheet's own units
 * ("the left side is in V, the right side in V^1.5"); SI base units only when no declared form is
 * known.
 */
import { type Cols, type Expr, constValue } from './ast'
import type { DiagnosticList } from './diagnostics'
import type { ParsedModel } from './model'
import { derivativeName } from './leibniz'
import { addDims, type Atoms, DIMENSIONLESS, type Dims, formatAtoms, formatDims, isDimensionless, sameDims, scaleDims, TIME_DIMS, type UnitInfo } from './units'

/** 'any': a bare number (adapts); 'unknown': involves a symbol without unit; `a`: the declared form, null when not known */
type D = { k: 'dims'; d: Dims; a: Atoms | null }
type U = D | { k: 'any' } | { k: 'unknown' }
const ANY: U = { k: 'any' }
const UNKNOWN: U = { k: 'unknown' }
const dims = (d: Dims, a: Atoms | null): D => ({ k: 'dims', d, a })
const DL = dims(DIMENSIONLESS, {})

/** the declared forms of a product (sign 1) or quotient (sign -1), or a power (k) */
function mulAtoms(a: Atoms | null, b: Atoms | null, sign = 1): Atoms | null {
  if (!a || !b) return null
  const out: Record<string, number> = { ...a }
  for (const [n, p] of Object.entries(b)) out[n] = (out[n] ?? 0) + sign * p
  return out
}
function powAtoms(a: Atoms | null, k: number): Atoms | null {
  if (!a) return null
  const out: Record<string, number> = {}
  for (const [n, p] of Object.entries(a)) out[n] = p * k
  return out
}
const mul = (a: D, b: D, sign = 1): D => dims(addDims(a.d, b.d, sign), mulAtoms(a.a, b.a, sign))
const pow = (a: D, k: number): D => dims(scaleDims(a.d, k), powAtoms(a.a, k))
/** a unit in the sheet's own terms (SI base units when no declared form is known) */
const show = (u: D): string => (u.a ? formatAtoms(u.a) : formatDims(u.d))
const declared = (u: UnitInfo): D => dims(u.dims, u.atoms ?? null)

export function checkUnits(m: ParsedModel, diags: DiagnosticList): void {
  const letUnits: U[] = m.lets.map(() => UNKNOWN)
  const symUnit = (u: UnitInfo | null): U => (u ? declared(u) : UNKNOWN)
  const timeName = m.timeUnit
  const time = dims(TIME_DIMS, { [timeName]: 1 })
  const ctx: Ctx = { m, diags, line: 0, letUnits, symUnit, time }
  /** a left side in `want` whose right side has unit `u` */
  const mismatch = (lhs: string, want: D, note: string, u: U, e: Expr, span: { line: number; column: number; endColumn: number }) => {
    if (u.k !== 'dims' || sameDims(u.d, want.d)) return
    diags.error(eqSpan(e, span.line, span), `unit mismatch: the left side ${lhs} is in ${show(want)}${note}, the right side in ${show(u)}`)
  }
  for (const i of m.letOrder) {
    ctx.line = m.lets[i].span.line
    const l = m.lets[i]
    const u = unitOf(l.expr, ctx)
    if (l.unit) mismatch(`let ${l.name}`, declared(l.unit), ' (as declared)', u, l.expr, l.span)
    letUnits[i] = l.unit ? symUnit(l.unit) : u
  }
  for (const eq of m.equations) {
    const st = m.states[eq.state]
    ctx.line = eq.span.line
    const u = unitOf(eq.expr, ctx)
    if (eq.form === 'derivative') {
      // the SI value of a right side with known unit is per second: scale it to per sheet time unit
      eq.timeFactor = u.k === 'dims' || (u.k === 'any' && st.unit !== null) ? m.secondsPerTimeUnit : 1
      if (st.unit) mismatch(derivativeName(st.name), mul(declared(st.unit), time, -1), ` (${st.name} in ${st.unit.text || '1'}, per ${timeName})`, u, eq.expr, eq.span)
    } else {
      eq.timeFactor = 1
      if (st.unit) mismatch(`next ${st.name}`, declared(st.unit), '', u, eq.expr, eq.span)
    }
  }
  for (const o of m.outputs) {
    ctx.line = o.span.line
    const u = unitOf(o.expr, ctx)
    if (o.unit) mismatch(`output ${o.name}`, declared(o.unit), ' (as declared)', u, o.expr, o.span)
  }
  for (const ev of m.events) {
    ctx.line = ev.span.line
    const s: Cols | undefined = ev.lhs.s && ev.rhs.s ? [ev.lhs.s[0], ev.rhs.s[1]] : undefined
    like(unitOf(ev.lhs, ctx), unitOf(ev.rhs, ctx), ev.lhs, ev.rhs, `the event condition '${ev.text}' compares values of`, ctx, s)
    for (const r of ev.resets) {
      if (r.target !== 'state') continue
      const st = m.states[r.index]
      const u = unitOf(r.expr, ctx)
      if (st.unit && u.k === 'dims' && !sameDims(u.d, st.unit.dims)) {
        diags.error(r.span, `the event sets ${st.name} to a value in ${show(u)}, but ${st.name} is in ${st.unit.text || '1'}`)
      }
    }
  }
}

interface Ctx {
  m: ParsedModel
  diags: DiagnosticList
  line: number
  letUnits: U[]
  symUnit(u: UnitInfo | null): U
  /** the time t, in the sheet's time unit */
  time: D
}

function eqSpan(e: Expr, line: number, fallback: { line: number; column: number; endColumn: number }) {
  return e.s ? { line, column: e.s[0], endColumn: e.s[1] } : fallback
}

function where(ctx: Ctx, s: Cols | undefined, alt?: Cols) {
  const c = s ?? alt ?? [1, 2]
  return { line: ctx.line, column: c[0], endColumn: c[1] }
}

function declaredUnitOfBare(e: Expr, ctx: Ctx): UnitInfo | null {
  const m = ctx.m
  switch (e.k) {
    case 'x': return m.states[e.i].unit
    case 'p': return m.params[e.i].unit
    case 'u': return m.inputs[e.i].unit
    case 'c': return m.consts[e.i].unit
    case 'delay': return m.inputs[e.input].unit
    default: return null
  }
}

/** a bare nonzero literal meeting a symbol declared in a non-SI unit is read in SI: say so */
function literalNote(lit: Expr, other: Expr, ctx: Ctx): void {
  const v = constValue(lit)
  if (v === null) return
  const u = declaredUnitOfBare(other, ctx)
  if (!u || (u.scale === 1 && u.offset === 0)) return
  if (v === 0 && u.offset === 0) return
  ctx.diags.warning(where(ctx, lit.s, other.s), `the number ${v} meets a quantity in ${u.text} and is read in SI units (${formatDims(u.dims)}); declare a const with a unit to be explicit`)
}

/** like units for + - comparisons min max …; returns the common unit. `lead` starts the message: 'sum of', 'the two branches of ?: have' */
function like(a: U, b: U, ea: Expr, eb: Expr, lead: string, ctx: Ctx, s: Cols | undefined): U {
  if (a.k === 'any' && b.k !== 'any') literalNote(ea, eb, ctx)
  if (b.k === 'any' && a.k !== 'any') literalNote(eb, ea, ctx)
  if (a.k === 'unknown' || b.k === 'unknown') return UNKNOWN
  if (a.k === 'any') return b
  if (b.k === 'any') return a
  if (!sameDims(a.d, b.d)) {
    ctx.diags.error(where(ctx, s), `${lead} unlike units: ${show(a)} and ${show(b)}`)
  }
  return a
}

function needDimensionless(u: U, e: Expr, what: string, ctx: Ctx): void {
  if (u.k === 'dims' && !isDimensionless(u.d)) {
    ctx.diags.error(where(ctx, e.s), `the argument of ${what} must be dimensionless, found ${show(u)}`)
  }
}

function unitOf(e: Expr, ctx: Ctx): U {
  const m = ctx.m
  switch (e.k) {
    case 'num': return ANY
    case 'x': return ctx.symUnit(m.states[e.i].unit)
    case 'p': return ctx.symUnit(m.params[e.i].unit)
    case 'u': return ctx.symUnit(m.inputs[e.i].unit)
    case 'c': return ctx.symUnit(m.consts[e.i].unit)
    case 'let': return ctx.letUnits[e.i]
    case 'tmp': return UNKNOWN
    case 'm': return DL
    case 't': return ctx.time
    case 'neg': return unitOf(e.a, ctx)
    case 'delay': return ctx.symUnit(m.inputs[e.input].unit)
    case 'bin': {
      const a = unitOf(e.a, ctx)
      const b = unitOf(e.b, ctx)
      switch (e.op) {
        case '+': return like(a, b, e.a, e.b, 'sum of', ctx, e.s)
        case '-': return like(a, b, e.a, e.b, 'difference of', ctx, e.s)
        case '*':
          if (a.k === 'unknown' || b.k === 'unknown') return UNKNOWN
          if (a.k === 'any') return b
          if (b.k === 'any') return a
          return mul(a, b)
        case '/':
          if (a.k === 'unknown' || b.k === 'unknown') return UNKNOWN
          if (a.k === 'any' && b.k === 'any') return ANY
          if (a.k === 'any') return pow(b as D, -1)
          if (b.k === 'any') return a
          return mul(a, b, -1)
        case '^': return power(a, b, e.b, ctx)
      }
      return UNKNOWN
    }
    case 'cmp': {
      like(unitOf(e.a, ctx), unitOf(e.b, ctx), e.a, e.b, 'comparison of', ctx, e.s)
      return DL
    }
    case 'cond': {
      unitOf(e.c, ctx)
      return like(unitOf(e.a, ctx), unitOf(e.b, ctx), e.a, e.b, 'the two branches of ?: have', ctx, e.s)
    }
    case 'lookup': {
      const lk = m.lookups[e.i]
      const a = unitOf(e.a, ctx)
      if (lk.argUnit && a.k === 'dims' && !sameDims(a.d, lk.argUnit.dims)) {
        ctx.diags.error(where(ctx, e.a.s, e.s), `lookup ${lk.name} expects an argument in ${lk.argUnit.text || '1'}, found ${show(a)}`)
      }
      return lk.unit ? declared(lk.unit) : UNKNOWN
    }
    case 'fn': {
      const args = e.args.map((a) => unitOf(a, ctx))
      const a0 = args[0]
      switch (e.f) {
        case 'sin': case 'cos': case 'tan': case 'asin': case 'acos': case 'atan':
        case 'sinh': case 'cosh': case 'tanh': case 'exp': case 'log': case 'log10':
          needDimensionless(a0, e.args[0], e.f, ctx)
          return a0.k === 'any' ? ANY : a0.k === 'unknown' ? UNKNOWN : DL
        case 'sqrt':
          return a0.k === 'dims' ? pow(a0, 0.5) : a0
        case 'abs': case 'floor': case 'ceil':
          return a0
        case 'sign':
          return a0.k === 'any' ? ANY : DL
        case 'min': case 'max':
          return like(a0, args[1], e.args[0], e.args[1], `${e.f} of`, ctx, e.s)
        case 'atan2': {
          const r = like(a0, args[1], e.args[0], e.args[1], 'atan2 of', ctx, e.s)
          return r.k === 'any' ? ANY : DL
        }
        case 'pow': return power(a0, args[1], e.args[1], ctx)
        case 'hypot': {
          let acc = a0
          for (let i = 1; i < args.length; i++) acc = like(acc, args[i], e.args[i - 1], e.args[i], 'hypot of', ctx, e.s)
          return acc
        }
      }
      return UNKNOWN
    }
  }
}

function power(a: U, b: U, eb: Expr, ctx: Ctx): U {
  needDimensionless(b, eb, 'an exponent', ctx)
  if (a.k !== 'dims' || isDimensionless(a.d)) return a.k === 'dims' ? DL : a
  const n = constValue(eb)
  if (n === null) {
    ctx.diags.error(where(ctx, eb.s), `the exponent of a quantity with unit ${show(a)} must be a plain number`)
    return UNKNOWN
  }
  return pow(a, n)
}
