/**
 * JavaScript generation from the resolved expression tree. Only our own templates, indices and
 * numbers printed by Number#toString reach the source: user text never does. Every generated
 * function writes into the caller's preallocated Float64Array, allocates nothing, and computes
 * each needed `let` once per call.
 */
import { type Expr, fold, mul, num, sub, walk, isNum } from './ast'
import type { CouplingAllFn, EventFunctions, SensitivityRhsFn } from './compiled'
import { diff, type PointVar } from './derivative'
import { couplingAllFunction, couplingFunction, sensitivityRhsFunction } from './coupling-codegen'
import type { ParsedModel } from './model'
import { SheetError, type Span } from './diagnostics'
import { type Dialect, Emitter, JS_DIALECT, lit, SizeBudget } from './emitter'

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
  /** the coupling term of all sensitivities in one call (coupling-codegen.ts); absent when too large */
  d2fs?: CouplingAllFn
  /** the sensitivities' right-hand sides, all in one call (coupling-codegen.ts); absent when too large */
  dfs?: SensitivityRhsFn
  /** sheets with events only */
  events?: EventFunctions
}
type Fn = (t: number, x: Float64Array, p: Float64Array, u: Float64Array, out: Float64Array) => void

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

  /**
   * `d2f`, the sensitivities' coupling term of the right-hand sides f, and `d2fs`, the same for all
   * sensitivities in one call (coupling-codegen.ts). d2fs is a faster form of d2f: it has a budget
   * of its own and is left out when it passes it, so it never stops a sheet from compiling.
   */
  couplingFns(f: Expr[], fSpans: Span[]): { d2f: string; d2fs?: string; dfs?: string } {
    const { m, em, dialect, budget, letExpr } = this
    const order = this.neededLets(f.map((e) => this.info(e)))
    const lets = this.letLines(order)
    const src = { m, em, dialect, f, fSpans, letExpr, order, letLines: () => lets }
    const d2f = couplingFunction({ ...src, budget })
    try {
      const own = new SizeBudget()
      return { d2f, d2fs: couplingAllFunction({ ...src, budget: own }), dfs: sensitivityRhsFunction({ ...src, budget: own }) }
    } catch (e) {
      if (e instanceof SheetError) return { d2f }
      throw e
    }
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
export function generateFunctions(m: ParsedModel, dialect: Dialect = JS_DIALECT, writer = new FunctionWriter(m, dialect), coupling = false): Record<GeneratedName, string> & { d2f?: string; d2fs?: string; dfs?: string } {
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
    ...(coupling ? w.couplingFns(f, fSpans) : {}),
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
    fns.d2fs ?? 'const d2fs=undefined;',
    fns.dfs ?? 'const dfs=undefined;',
    ...ev.source,
    `return {rhs,outputsFn:outputs,dfdx,dfdp,dfdu,dfdt,dgdx,dgdp,dgdu,d2f,d2fs,dfs${ev.names}};`,
  ]
  return parts.join('\n')
}

/** Build the functions from our own generated source (never from user text). `M` holds the mode positions the functions read. */
export function instantiate(source: string, m: ParsedModel, M: Float64Array): GeneratedFunctions {
  const factory = new Function('TX', 'TY', 'M', source) as (tx: Float64Array[], ty: Float64Array[], M: Float64Array) => GeneratedFunctions
  return factory(m.lookups.map((l) => l.xs), m.lookups.map((l) => l.ys), M)
}
