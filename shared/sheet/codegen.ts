/**
 * JavaScript generation from the resolved expression tree. Only our own templates, indices and
 * numbers printed by Number#toString reach the source: user text never does. Every generated
 * function writes into the caller's preallocated Float64Array, allocates nothing, and computes
 * each needed `let` once per call.
 */
import { type CmpOp, type Expr, type FnName, fold, mul, num, sub, walk, isNum } from './ast'
import type { EventFunctions } from './compiled'
import { diff, type PointVar } from './derivative'
import { couplingFunction } from './coupling-codegen'
import type { ParsedModel } from './model'
import { SheetError, type Span } from './diagnostics'

/**
 * Largest generated source (characters). A checked sheet can still ask for a huge derivative (each
 * equation is differentiated by every state, parameter and input); past this the compile stops with a
 * diagnostic on the equation being generated instead of building megabytes of code.
 */
export const MAX_GENERATED_CHARS = 1_000_000

/** Counts the generated characters; throws a SheetError at `span` once the total passes the limit. */
export class SizeBudget {
  used = 0
  add(text: string, span: Span | undefined): string {
    this.used += text.length
    if (this.used > MAX_GENERATED_CHARS) {
      const at = span ?? { line: 1, column: 1, endColumn: 2 }
      throw new SheetError([{ ...at, severity: 'error', message: `the code generated for this sheet is too large (more than ${MAX_GENERATED_CHARS} characters; this equation and its derivatives pass the limit): simplify it or split it with let` }])
    }
    return text
  }
}

export interface GeneratedFunctions {
  rhs: Fn
  outputsFn: Fn
  dfdx: Fn
  dfdp: Fn
  dfdu: Fn
  dfdt: Fn
  dgdx: Fn
  dgdp: Fn
  dgdu: Fn
  d2f: Fn
  /** sheets with events only */
  events?: EventFunctions
}
type Fn = (t: number, x: Float64Array, p: Float64Array, u: Float64Array, out: Float64Array) => void

/** a number as a JavaScript literal */
export function lit(v: number): string {
  if (Number.isNaN(v)) return '(0/0)'
  if (v === Infinity) return '(1/0)'
  if (v === -Infinity) return '(-1/0)'
  if (v < 0 || Object.is(v, -0)) return `(-${String(-v)})`
  return String(v)
}

const MATH: Record<string, string> = {
  sin: 'Math.sin', cos: 'Math.cos', tan: 'Math.tan', asin: 'Math.asin', acos: 'Math.acos', atan: 'Math.atan',
  sinh: 'Math.sinh', cosh: 'Math.cosh', tanh: 'Math.tanh', exp: 'Math.exp', log: 'Math.log', log10: 'Math.log10',
  sqrt: 'Math.sqrt', abs: 'Math.abs', sign: 'Math.sign', floor: 'Math.floor', ceil: 'Math.ceil',
  atan2: 'Math.atan2', pow: 'Math.pow', min: 'Math.min', max: 'Math.max', hypot: 'Math.hypot',
}
const CMP: Record<string, string> = { '<': '<', '<=': '<=', '>': '>', '>=': '>=', '==': '===', '!=': '!==' }

/**
 * The target language of generated code: JavaScript (the compiled model, the ES module export) or C99
 * (the C and FMU exports). Both get the same expressions, lets and derivative temporaries.
 */
export interface Dialect {
  lit(v: number): string
  fn(f: FnName, args: string[]): string
  cmp(op: CmpOp): string
  /** a constant local: `const L0=…;` */
  decl(name: string, value: string): string
  /** opening line of one generated function (t, x, p, u, out) */
  open(name: string): string
  /** set out[0 … n) to zero */
  zero(n: number): string
  /** a lookup call: table i, its slope when d */
  lookup(i: number, d: boolean, arg: string): string
  /** the seconds-per-time-unit constant's name */
  spt: string
  /** marks a local as possibly unused ('' when the language does not care) */
  unused(name: string): string
}

export const JS_DIALECT: Dialect = {
  lit,
  fn: (f, args) => `${MATH[f]}(${args.join(',')})`,
  cmp: (op) => CMP[op],
  decl: (name, value) => `const ${name}=${value};`,
  open: (name) => `function ${name}(t,x,p,u,out){`,
  // a plain loop: TypedArray#fill costs more than the stores themselves on the small arrays here
  zero: (n) => (n > 0 ? `for(let k=0;k<${n};k++)out[k]=0;` : ''),
  lookup: (i, d, arg) => `${d ? 'lkd' : 'lkv'}(X${i},Y${i},${arg})`,
  spt: 'SPT',
  unused: () => '',
}

export class Emitter {
  /** subtrees held in named temporaries: emitted as their name */
  hoisted: Map<Expr, string> | null = null
  constructor(private readonly m: ParsedModel, private readonly d: Dialect = JS_DIALECT) {}
  emit(e: Expr): string {
    const d = this.d
    const h = this.hoisted?.get(e)
    if (h !== undefined) return h
    switch (e.k) {
      case 'num': return d.lit(e.v)
      case 'x': return `x[${e.i}]`
      case 'p': return `p[${e.i}]`
      case 'u': return `u[${e.i}]`
      case 'delay': return `u[${e.slot}]`
      case 'c': return d.lit(this.m.consts[e.i].value)
      case 'let': return `L${e.i}`
      case 'tmp': return `D${e.i}`
      case 'm': return `M[${e.i}]`
      case 't': return 'ts'
      case 'neg': return `(-${this.emit(e.a)})`
      case 'bin': {
        if (e.op === '^') {
          if (isNum(e.b, 2) && isSimple(e.a)) { const a = this.emit(e.a); return `(${a}*${a})` }
          if (isNum(e.b, 0.5)) return d.fn('sqrt', [this.emit(e.a)])
          return d.fn('pow', [this.emit(e.a), this.emit(e.b)])
        }
        return `(${this.emit(e.a)}${e.op}${this.emit(e.b)})`
      }
      case 'cmp': return `(${this.emit(e.a)}${d.cmp(e.op)}${this.emit(e.b)}?${d.lit(1)}:${d.lit(0)})`
      case 'cond': return `(${this.emit(e.c)}?${this.emit(e.a)}:${this.emit(e.b)})`
      case 'fn': return d.fn(e.f, e.args.map((a) => this.emit(a)))
      case 'lookup': return d.lookup(e.i, e.d, this.emit(e.a))
    }
  }
}

function isSimple(e: Expr): boolean {
  return e.k === 'x' || e.k === 'p' || e.k === 'u' || e.k === 'let' || e.k === 'tmp' || e.k === 't' || e.k === 'delay'
}

type Key = string
const keyOf = (v: PointVar): Key => (v.k === 't' ? 't' : `${v.k}${v.i}`)

/** the variables (states, params, input slots, t) an expression depends on, through its lets */
function directVars(e: Expr, lets: Set<number>): Set<Key> {
  const out = new Set<Key>()
  walk(e, (n) => {
    if (n.k === 'x' || n.k === 'p' || n.k === 'u') out.add(`${n.k}${n.i}`)
    else if (n.k === 'delay') out.add(`u${n.slot}`)
    else if (n.k === 't') out.add('t')
    else if (n.k === 'let') lets.add(n.i)
  })
  return out
}

/** names of the generated functions, in order */
export const GENERATED = ['rhs', 'outputs', 'dfdx', 'dfdp', 'dfdu', 'dfdt', 'dgdx', 'dgdp', 'dgdu'] as const
export type GeneratedName = (typeof GENERATED)[number]

type Info = { vars: Set<Key>; lets: Set<number> }

/**
 * Writes value functions and exact Jacobians of lists of expressions over one sheet's lets: each
 * function computes only the lets its expressions need, once, and each Jacobian column only the
 * let derivatives on the path to its variable.
 */
export class FunctionWriter {
  readonly em: Emitter
  readonly budget = new SizeBudget()
  private readonly constant: (i: number) => number
  private readonly letExpr: Expr[]
  private readonly letDirectLets: Set<number>[]
  private readonly letVars: Set<Key>[]
  readonly xs: PointVar[]
  readonly ps: PointVar[]
  readonly us: PointVar[]
  readonly ts: PointVar[] = [{ k: 't' }]

  constructor(private readonly m: ParsedModel, private readonly dialect: Dialect = JS_DIALECT) {
    this.em = new Emitter(m, dialect)
    this.constant = (i: number) => m.consts[i].value
    this.letExpr = m.lets.map((l) => fold(l.expr, this.constant))
    // dependencies of each let: lets used directly, and variables used (transitively)
    this.letDirectLets = m.lets.map(() => new Set<number>())
    this.letVars = m.lets.map(() => new Set<Key>())
    for (const i of m.letOrder) {
      const own = directVars(this.letExpr[i], this.letDirectLets[i])
      for (const j of this.letDirectLets[i]) for (const k of this.letVars[j]) own.add(k)
      this.letVars[i] = own
    }
    this.xs = m.states.map((_, i) => ({ k: 'x', i }))
    this.ps = m.params.map((_, i) => ({ k: 'p', i }))
    this.us = Array.from({ length: m.inputs.length + m.delays.length }, (_, i) => ({ k: 'u', i }))
  }

  /** an expression with the consts folded in */
  fold(e: Expr): Expr {
    return fold(e, this.constant)
  }

  private info(e: Expr): Info {
    const ls = new Set<number>()
    const vars = directVars(e, ls)
    for (const j of ls) for (const k of this.letVars[j]) vars.add(k)
    return { vars, lets: ls }
  }

  /** lets needed by a set of expressions, in evaluation order */
  private neededLets(infos: Info[]): number[] {
    const need = new Set<number>()
    const stack: number[] = []
    for (const inf of infos) for (const l of inf.lets) stack.push(l)
    while (stack.length) {
      const l = stack.pop()!
      if (need.has(l)) continue
      need.add(l)
      for (const j of this.letDirectLets[l]) stack.push(j)
    }
    return this.m.letOrder.filter((i) => need.has(i))
  }

  private letLines(order: number[]): string {
    return order.map((i) => this.budget.add(this.dialect.decl(`L${i}`, this.em.emit(this.letExpr[i])), this.m.lets[i].span)).join('\n')
  }

  /** out[i] = exprs[i] */
  valueFn(name: string, exprs: Expr[], spans: Span[]): string {
    const { dialect, em, budget } = this
    const infos = exprs.map((e) => this.info(e))
    const lines = [dialect.open(name), dialect.decl('ts', `t*${dialect.spt}`), dialect.unused('ts'), this.letLines(this.neededLets(infos))]
    exprs.forEach((e, i) => lines.push(budget.add(`out[${i}]=${em.emit(e)};`, spans[i])))
    lines.push('}')
    return lines.join('\n')
  }

  /** out[i*ncol + j] = ∂exprs[i]/∂vars[j] (row-major) */
  jacFn(name: string, exprs: Expr[], vars: PointVar[], spans: Span[]): string {
    const { dialect, em, budget, m } = this
    const infos = exprs.map((e) => this.info(e))
    const ncol = vars.length
    const order = this.neededLets(infos)
    const lines: string[] = []
    vars.forEach((v, j) => {
      const key = keyOf(v)
      const rows = exprs.map((_, i) => i).filter((i) => infos[i].vars.has(key))
      if (rows.length === 0) return
      const body: string[] = []
      const hasTmp = new Set<number>()
      const ctx = {
        secondsPerTimeUnit: m.secondsPerTimeUnit,
        letDerivative: (i: number): Expr => (hasTmp.has(i) ? { k: 'tmp', i } : num(0)),
      }
      for (const li of order) {
        if (!this.letVars[li].has(key)) continue
        const d = diff(this.letExpr[li], v, ctx)
        if (isNum(d, 0)) continue
        hasTmp.add(li)
        body.push(budget.add(dialect.decl(`D${li}`, em.emit(d)), m.lets[li].span))
      }
      for (const i of rows) {
        const d = diff(exprs[i], v, ctx)
        if (isNum(d, 0)) continue
        body.push(budget.add(`out[${i * ncol + j}]=${em.emit(d)};`, spans[i]))
      }
      if (body.length) lines.push('{', ...body, '}')
    })
    const head = [dialect.open(name), dialect.zero(exprs.length * ncol)]
    if (lines.length) head.push(dialect.decl('ts', `t*${dialect.spt}`), dialect.unused('ts'), this.letLines(order))
    return [...head, ...lines, '}'].join('\n')
  }

  /** `d2f`, the sensitivities' coupling term of the right-hand sides f (coupling-codegen.ts) */
  couplingFn(f: Expr[], fSpans: Span[]): string {
    const { m, em, dialect, budget, letExpr } = this
    const order = this.neededLets(f.map((e) => this.info(e)))
    return couplingFunction({ m, em, dialect, budget, f, fSpans, letExpr, order, letLines: (o) => this.letLines(o) })
  }

  /** the function and its four Jacobians (x, p, u, t) under names base, base+'x', … */
  withJacobians(base: string, exprs: Expr[], spans: Span[]): string[] {
    return [
      this.valueFn(base, exprs, spans),
      this.jacFn(`${base}x`, exprs, this.xs, spans),
      this.jacFn(`${base}p`, exprs, this.ps, spans),
      this.jacFn(`${base}u`, exprs, this.us, spans),
      this.jacFn(`${base}t`, exprs, this.ts, spans),
    ]
  }
}

/** The nine model functions as source text of the dialect. */
/**
 * The nine model functions as source text of the dialect; with `coupling` also `d2f`, the
 * sensitivities' coupling term (coupling-codegen.ts; the compiled model only, not the exports).
 */
export function generateFunctions(m: ParsedModel, dialect: Dialect = JS_DIALECT, writer = new FunctionWriter(m, dialect), coupling = false): Record<GeneratedName, string> & { d2f?: string } {
  const w = writer
  // right sides in the compiled units: d(x_SI)/d(t_sheet) for derivatives, x(k+1) for next-equations
  const f: Expr[] = m.equations.map((q) => w.fold(q.timeFactor !== 1 ? mul(num(q.timeFactor), q.expr) : q.expr))
  const g: Expr[] = m.outputs.map((o) => w.fold(o.expr))
  const fSpans = m.equations.map((q) => q.span)
  const gSpans = m.outputs.map((o) => o.span)
  return {
    rhs: w.valueFn('rhs', f, fSpans),
    outputs: w.valueFn('outputs', g, gSpans),
    dfdx: w.jacFn('dfdx', f, w.xs, fSpans),
    dfdp: w.jacFn('dfdp', f, w.ps, fSpans),
    dfdu: w.jacFn('dfdu', f, w.us, fSpans),
    dfdt: w.jacFn('dfdt', f, w.ts, fSpans),
    dgdx: w.jacFn('dgdx', g, w.xs, gSpans),
    dgdp: w.jacFn('dgdp', g, w.ps, gSpans),
    dgdu: w.jacFn('dgdu', g, w.us, gSpans),
    ...(coupling ? { d2f: w.couplingFn(f, fSpans) } : {}),
  }
}

/** Event conditions h = A − B and the post-event states of each event, with their Jacobians (JavaScript only). */
function generateEventFunctions(m: ParsedModel, w: FunctionWriter): { source: string[]; names: string } {
  if (m.events.length === 0) return { source: [], names: '' }
  const spans = m.events.map((e) => e.span)
  const h = m.events.map((e) => w.fold(sub(e.lhs, e.rhs)))
  const source = w.withJacobians('ev', h, spans)
  const resets: string[] = []
  m.events.forEach((ev, k) => {
    // every state: its assignment, or itself; all read the values before the event
    const exprs: Expr[] = m.states.map((_, i) => ({ k: 'x', i }))
    const rs: Span[] = m.states.map(() => ev.span)
    for (const r of ev.resets) if (r.target === 'state') { exprs[r.index] = w.fold(r.expr); rs[r.index] = r.span }
    source.push(...w.withJacobians(`r${k}`, exprs, rs))
    resets.push(`{x:r${k},dx:r${k}x,dp:r${k}p,du:r${k}u,dt:r${k}t}`)
  })
  return { source, names: `,events:{h:ev,dhdx:evx,dhdp:evp,dhdu:evu,dhdt:evt,resets:[${resets.join(',')}]}` }
}

export function generateSource(m: ParsedModel): string {
  const w = new FunctionWriter(m, JS_DIALECT)
  const fns = generateFunctions(m, JS_DIALECT, w, true)
  const ev = generateEventFunctions(m, w)
  const parts: string[] = [
    "'use strict';",
    `const SPT=${lit(m.secondsPerTimeUnit)};`,
    // 1-D table, linear between points, clamped at the ends; NaN stays NaN
    'function lkv(X,Y,v){const n=X.length;if(v!==v)return v;if(v<=X[0])return Y[0];if(v>=X[n-1])return Y[n-1];let lo=0,hi=n-1;while(hi-lo>1){const k=(lo+hi)>>1;if(X[k]<=v)lo=k;else hi=k;}return Y[lo]+(Y[lo+1]-Y[lo])*(v-X[lo])/(X[lo+1]-X[lo]);}',
    'function lkd(X,Y,v){const n=X.length;if(v!==v)return v;if(v<=X[0]||v>=X[n-1])return 0;let lo=0,hi=n-1;while(hi-lo>1){const k=(lo+hi)>>1;if(X[k]<=v)lo=k;else hi=k;}return (Y[lo+1]-Y[lo])/(X[lo+1]-X[lo]);}',
    ...m.lookups.map((_, i) => `const X${i}=TX[${i}],Y${i}=TY[${i}];`),
    ...GENERATED.map((n) => fns[n]),
    fns.d2f!,
    ...ev.source,
    `return {rhs,outputsFn:outputs,dfdx,dfdp,dfdu,dfdt,dgdx,dgdp,dgdu,d2f${ev.names}};`,
  ]
  return parts.join('\n')
}

/** Build the functions from our own generated source (never from user text). `M` holds the mode positions the functions read. */
export function instantiate(source: string, m: ParsedModel, M: Float64Array): GeneratedFunctions {
  const factory = new Function('TX', 'TY', 'M', source) as (tx: Float64Array[], ty: Float64Array[], M: Float64Array) => GeneratedFunctions
  return factory(m.lookups.map((l) => l.xs), m.lookups.map((l) => l.ys), M)
}
