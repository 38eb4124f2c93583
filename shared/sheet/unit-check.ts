/**
 * Dimensional check of every expression (mathjs units give each declared symbol its dimension
 * vector; see units.ts). Rules: sums, differences, comparisons, min/max/hypot/atan2 and the two
 * branches of ?: need like units; exp/log/trig/hyperbolic arguments are dimensionless; a power of a
 * quantity needs a plain-number exponent; a bare number adapts to the unit it meets; a symbol
 * without a unit makes its part of the check unknown (skipped).
 */
import { type Cols, type Expr, constValue } from './ast'
import type { DiagnosticList } from './diagnostics'
import type { ParsedModel } from './model'
import { derivativeName } from './leibniz'
import { addDims, DIMENSIONLESS, type Dims, formatDims, isDimensionless, sameDims, scaleDims, TIME_DIMS, type UnitInfo } from './units'

/** 'any': a bare number (adapts); 'unknown': involves a symbol without unit */
type U = { k: 'dims'; d: Dims } | { k: 'any' } | { k: 'unknown' }
const ANY: U = { k: 'any' }
const UNKNOWN: U = { k: 'unknown' }
const dims = (d: Dims): U => ({ k: 'dims', d })
const DL = dims(DIMENSIONLESS)

export function checkUnits(m: ParsedModel, diags: DiagnosticList): void {
  const letUnits: U[] = m.lets.map(() => UNKNOWN)
  const symUnit = (u: UnitInfo | null): U => (u ? dims(u.dims) : UNKNOWN)
  const ctx: Ctx = { m, diags, line: 0, letUnits, symUnit }
  for (const i of m.letOrder) {
    ctx.line = m.lets[i].span.line
    const l = m.lets[i]
    const u = unitOf(l.expr, ctx)
    if (l.unit && u.k === 'dims' && !sameDims(u.d, l.unit.dims)) {
      diags.error(eqSpan(l.expr, l.span.line, l.span), `let ${l.name} has unit ${formatDims(u.d)} but is declared in ${l.unit.text || '1'} (${formatDims(l.unit.dims)})`)
    }
    letUnits[i] = l.unit ? symUnit(l.unit) : u
  }
  const timeName = m.timeUnit
  for (const eq of m.equations) {
    const st = m.states[eq.state]
    ctx.line = eq.span.line
    const u = unitOf(eq.expr, ctx)
    if (eq.form === 'derivative') {
      // the SI value of a right side with known unit is per second: scale it to per sheet time unit
      eq.timeFactor = u.k === 'dims' || (u.k === 'any' && st.unit !== null) ? m.secondsPerTimeUnit : 1
      if (st.unit && u.k === 'dims') {
        const want = addDims(st.unit.dims, TIME_DIMS, -1)
        if (!sameDims(u.d, want)) {
          diags.error(eqSpan(eq.expr, eq.span.line, eq.span), `${derivativeName(st.name)} has unit ${formatDims(u.d)} but should have ${formatDims(want)} (the unit of ${st.name}, ${st.unit.text || '1'}, per ${timeName})`)
        }
      }
    } else {
      eq.timeFactor = 1
      if (st.unit && u.k === 'dims' && !sameDims(u.d, st.unit.dims)) {
        diags.error(eqSpan(eq.expr, eq.span.line, eq.span), `next ${st.name} has unit ${formatDims(u.d)} but should have ${formatDims(st.unit.dims)} (the unit of ${st.name})`)
      }
    }
  }
  for (const o of m.outputs) {
    ctx.line = o.span.line
    const u = unitOf(o.expr, ctx)
    if (o.unit && u.k === 'dims' && !sameDims(u.d, o.unit.dims)) {
      diags.error(eqSpan(o.expr, o.span.line, o.span), `output ${o.name} has unit ${formatDims(u.d)} but is declared in ${o.unit.text} (${formatDims(o.unit.dims)})`)
    }
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
        diags.error(r.span, `the event sets ${st.name} to a value in ${formatDims(u.d)}, but ${st.name} is in ${st.unit.text || '1'} (${formatDims(st.unit.dims)})`)
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
    ctx.diags.error(where(ctx, s), `${lead} unlike units: ${formatDims(a.d)} and ${formatDims(b.d)}`)
  }
  return a
}

function needDimensionless(u: U, e: Expr, what: string, ctx: Ctx): void {
  if (u.k === 'dims' && !isDimensionless(u.d)) {
    ctx.diags.error(where(ctx, e.s), `the argument of ${what} must be dimensionless, found ${formatDims(u.d)}`)
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
    case 't': return dims(TIME_DIMS)
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
          return dims(addDims(a.d, b.d))
        case '/':
          if (a.k === 'unknown' || b.k === 'unknown') return UNKNOWN
          if (a.k === 'any' && b.k === 'any') return ANY
          if (a.k === 'any') return dims(scaleDims((b as { d: Dims }).d, -1))
          if (b.k === 'any') return a
          return dims(addDims(a.d, b.d, -1))
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
        ctx.diags.error(where(ctx, e.a.s, e.s), `lookup ${lk.name} expects an argument in ${lk.argUnit.text || '1'} (${formatDims(lk.argUnit.dims)}), found ${formatDims(a.d)}`)
      }
      return lk.unit ? dims(lk.unit.dims) : UNKNOWN
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
          return a0.k === 'dims' ? dims(scaleDims(a0.d, 0.5)) : a0
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
    ctx.diags.error(where(ctx, eb.s), `the exponent of a quantity with unit ${formatDims(a.d)} must be a plain number`)
    return UNKNOWN
  }
  return dims(scaleDims(a.d, n))
}
