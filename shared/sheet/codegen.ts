/**
 * JavaScript generation from the resolved expression tree. Only our own templates, indices and
 * numbers printed by Number#toString reach the source: user text never does. Every generated
 * function writes into the caller's preallocated Float64Array, allocates nothing, and computes
 * each needed `let` once per call.
 */
import { type Expr, fold, mul, num, walk, isNum } from './ast'
import { diff, type Var } from './derivative'
import type { ParsedModel } from './model'
import { SheetError, type Span } from './diagnostics'

/**
 * Largest generated source (characters). A checked sheet can still ask for a huge derivative (each
 * equation is differentiated by every state, parameter and input); past this the compile stops with a
 * diagnostic on the equation being generated instead of building megabytes of code.
 */
export const MAX_GENERATED_CHARS = 1_000_000

/** Counts the generated characters; throws a SheetError at `span` once the total passes the limit. */
class SizeBudget {
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

export class Emitter {
  constructor(private readonly m: ParsedModel) {}
  emit(e: Expr): string {
    switch (e.k) {
      case 'num': return lit(e.v)
      case 'x': return `x[${e.i}]`
      case 'p': return `p[${e.i}]`
      case 'u': return `u[${e.i}]`
      case 'delay': return `u[${e.slot}]`
      case 'c': return lit(this.m.consts[e.i].value)
      case 'let': return `L${e.i}`
      case 'tmp': return `D${e.i}`
      case 't': return 'ts'
      case 'neg': return `(-${this.emit(e.a)})`
      case 'bin': {
        if (e.op === '^') {
          if (isNum(e.b, 2) && isSimple(e.a)) { const a = this.emit(e.a); return `(${a}*${a})` }
          if (isNum(e.b, 0.5)) return `Math.sqrt(${this.emit(e.a)})`
          return `Math.pow(${this.emit(e.a)},${this.emit(e.b)})`
        }
        return `(${this.emit(e.a)}${e.op}${this.emit(e.b)})`
      }
      case 'cmp': return `(${this.emit(e.a)}${CMP[e.op]}${this.emit(e.b)}?1:0)`
      case 'cond': return `(${this.emit(e.c)}?${this.emit(e.a)}:${this.emit(e.b)})`
      case 'fn': return `${MATH[e.f]}(${e.args.map((a) => this.emit(a)).join(',')})`
      case 'lookup': return `${e.d ? 'lkd' : 'lkv'}(X${e.i},Y${e.i},${this.emit(e.a)})`
    }
  }
}

function isSimple(e: Expr): boolean {
  return e.k === 'x' || e.k === 'p' || e.k === 'u' || e.k === 'let' || e.k === 'tmp' || e.k === 't' || e.k === 'delay'
}

type Key = string
const keyOf = (v: Var): Key => (v.k === 't' ? 't' : `${v.k}${v.i}`)

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

export function generateSource(m: ParsedModel): string {
  const nu = m.inputs.length + m.delays.length
  const em = new Emitter(m)
  const budget = new SizeBudget()
  const letSpan = (i: number) => m.lets[i].span

  // right sides in the compiled units: d(x_SI)/d(t_sheet) for derivatives, x(k+1) for next-equations
  const constant = (i: number) => m.consts[i].value
  const f: Expr[] = m.equations.map((q) => fold(q.timeFactor !== 1 ? mul(num(q.timeFactor), q.expr) : q.expr, constant))
  const g: Expr[] = m.outputs.map((o) => fold(o.expr, constant))
  const letExpr: Expr[] = m.lets.map((l) => fold(l.expr, constant))

  // dependencies of each let: lets used directly, and variables used (transitively)
  const letDirectLets = m.lets.map(() => new Set<number>())
  const letVars: Set<Key>[] = m.lets.map(() => new Set<Key>())
  for (const i of m.letOrder) {
    const own = directVars(letExpr[i], letDirectLets[i])
    for (const j of letDirectLets[i]) for (const k of letVars[j]) own.add(k)
    letVars[i] = own
  }
  const exprInfo = (e: Expr) => {
    const ls = new Set<number>()
    const vars = directVars(e, ls)
    for (const j of ls) for (const k of letVars[j]) vars.add(k)
    return { vars, lets: ls }
  }
  const fInfo = f.map(exprInfo)
  const gInfo = g.map(exprInfo)

  /** lets needed by a set of expressions, in evaluation order */
  const neededLets = (infos: { lets: Set<number> }[]): number[] => {
    const need = new Set<number>()
    const stack: number[] = []
    for (const inf of infos) for (const l of inf.lets) stack.push(l)
    while (stack.length) {
      const l = stack.pop()!
      if (need.has(l)) continue
      need.add(l)
      for (const j of letDirectLets[l]) stack.push(j)
    }
    return m.letOrder.filter((i) => need.has(i))
  }
  const letLines = (order: number[]) => order.map((i) => budget.add(`const L${i}=${em.emit(letExpr[i])};`, letSpan(i))).join('\n')

  const valueFn = (name: string, exprs: Expr[], infos: { lets: Set<number> }[], spans: Span[]) => {
    const lines = [`function ${name}(t,x,p,u,out){`, 'const ts=t*SPT;', letLines(neededLets(infos))]
    exprs.forEach((e, i) => lines.push(budget.add(`out[${i}]=${em.emit(e)};`, spans[i])))
    lines.push('}')
    return lines.join('\n')
  }

  const jacFn = (name: string, exprs: Expr[], infos: { vars: Set<Key>; lets: Set<number> }[], vars: Var[], spans: Span[]) => {
    const ncol = vars.length
    const order = neededLets(infos)
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
        if (!letVars[li].has(key)) continue
        const d = diff(letExpr[li], v, ctx)
        if (isNum(d, 0)) continue
        hasTmp.add(li)
        body.push(budget.add(`const D${li}=${em.emit(d)};`, letSpan(li)))
      }
      for (const i of rows) {
        const d = diff(exprs[i], v, ctx)
        if (isNum(d, 0)) continue
        body.push(budget.add(`out[${i * ncol + j}]=${em.emit(d)};`, spans[i]))
      }
      if (body.length) lines.push('{', ...body, '}')
    })
    const head = [`function ${name}(t,x,p,u,out){`, 'out.fill(0);']
    if (lines.length) head.push('const ts=t*SPT;', letLines(order))
    return [...head, ...lines, '}'].join('\n')
  }

  const fSpans = m.equations.map((q) => q.span)
  const gSpans = m.outputs.map((o) => o.span)
  const xs: Var[] = m.states.map((_, i) => ({ k: 'x', i }))
  const ps: Var[] = m.params.map((_, i) => ({ k: 'p', i }))
  const us: Var[] = Array.from({ length: nu }, (_, i) => ({ k: 'u', i }))
  const ts: Var[] = [{ k: 't' }]

  const parts: string[] = [
    "'use strict';",
    `const SPT=${lit(m.secondsPerTimeUnit)};`,
    // 1-D table, linear between points, clamped at the ends; NaN stays NaN
    'function lkv(X,Y,v){const n=X.length;if(v!==v)return v;if(v<=X[0])return Y[0];if(v>=X[n-1])return Y[n-1];let lo=0,hi=n-1;while(hi-lo>1){const k=(lo+hi)>>1;if(X[k]<=v)lo=k;else hi=k;}return Y[lo]+(Y[lo+1]-Y[lo])*(v-X[lo])/(X[lo+1]-X[lo]);}',
    'function lkd(X,Y,v){const n=X.length;if(v!==v)return v;if(v<=X[0]||v>=X[n-1])return 0;let lo=0,hi=n-1;while(hi-lo>1){const k=(lo+hi)>>1;if(X[k]<=v)lo=k;else hi=k;}return (Y[lo+1]-Y[lo])/(X[lo+1]-X[lo]);}',
    ...m.lookups.map((_, i) => `const X${i}=TX[${i}],Y${i}=TY[${i}];`),
    valueFn('rhs', f, fInfo, fSpans),
    valueFn('outputs', g, gInfo, gSpans),
    jacFn('dfdx', f, fInfo, xs, fSpans),
    jacFn('dfdp', f, fInfo, ps, fSpans),
    jacFn('dfdu', f, fInfo, us, fSpans),
    jacFn('dfdt', f, fInfo, ts, fSpans),
    jacFn('dgdx', g, gInfo, xs, gSpans),
    jacFn('dgdp', g, gInfo, ps, gSpans),
    jacFn('dgdu', g, gInfo, us, gSpans),
    'return {rhs,outputsFn:outputs,dfdx,dfdp,dfdu,dfdt,dgdx,dgdp,dgdu};',
  ]
  return parts.join('\n')
}

/** Build the functions from our own generated source (never from user text). */
export function instantiate(source: string, m: ParsedModel): GeneratedFunctions {
  // eslint-disable-next-line @typescript-eslint/no-implied-eval
  const factory = new Function('TX', 'TY', source) as (tx: Float64Array[], ty: Float64Array[]) => GeneratedFunctions
  return factory(m.lookups.map((l) => l.xs), m.lookups.map((l) => l.ys))
}
