/**
 * The pieces every code generator of the sheet compiler shares: the target language (`Dialect`, with
 * the JavaScript one), the expression printer (`Emitter`) and the size budget of the generated
 * source. codegen.ts writes the values and Jacobians with them, coupling-codegen.ts the second
 * directional derivative, the C export its C99 text.
 */
import { type CmpOp, type Expr, type FnName, isNum } from './ast'
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
