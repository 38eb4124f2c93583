/**
 * The expression tree of a sheet after name resolution. Built from mathjs's parse tree by
 * expression.ts, checked by unit-check.ts, differentiated by derivative.ts and turned into
 * JavaScript by codegen.ts. Symbols are indices, never user text.
 */
export type Fn1 =
  | 'sin' | 'cos' | 'tan' | 'asin' | 'acos' | 'atan' | 'sinh' | 'cosh' | 'tanh'
  | 'exp' | 'log' | 'log10' | 'sqrt' | 'abs' | 'sign' | 'floor' | 'ceil'
export type Fn2 = 'atan2' | 'pow' | 'min' | 'max'
export type FnName = Fn1 | Fn2 | 'hypot'
export const FN1: readonly Fn1[] = ['sin', 'cos', 'tan', 'asin', 'acos', 'atan', 'sinh', 'cosh', 'tanh', 'exp', 'log', 'log10', 'sqrt', 'abs', 'sign', 'floor', 'ceil']
export const FN2: readonly Fn2[] = ['atan2', 'pow', 'min', 'max']
/** Smooth switches and limits, written out in the functions above by smooth.ts. */
export const SMOOTH_FUNCTION_NAMES: readonly string[] = ['soft_step', 'soft_switch', 'soft_max', 'soft_min', 'soft_clamp']
export const FUNCTIONS: readonly string[] = [...FN1, ...FN2, 'hypot', ...SMOOTH_FUNCTION_NAMES]

export type BinOp = '+' | '-' | '*' | '/' | '^'
export type CmpOp = '<' | '<=' | '>' | '>=' | '==' | '!='

/** Source columns of a node on its line (1-based, end exclusive). */
export type Cols = [number, number]

export type Expr =
  | { k: 'num'; v: number; s?: Cols }
  /** state, parameter, input (index may be a delayed slot nu + k), constant, let, derivative temporary, mode */
  | { k: 'x' | 'p' | 'u' | 'c' | 'let' | 'tmp' | 'm'; i: number; s?: Cols }
  /** the time, in seconds (t_sheet * secondsPerTimeUnit) */
  | { k: 't'; s?: Cols }
  | { k: 'neg'; a: Expr; s?: Cols }
  | { k: 'bin'; op: BinOp; a: Expr; b: Expr; s?: Cols }
  | { k: 'cmp'; op: CmpOp; a: Expr; b: Expr; s?: Cols }
  | { k: 'cond'; c: Expr; a: Expr; b: Expr; s?: Cols }
  | { k: 'fn'; f: FnName; args: Expr[]; s?: Cols }
  /** a 1-D lookup (i: lookup index); `d` = its slope */
  | { k: 'lookup'; i: number; a: Expr; d: boolean; s?: Cols }
  /** delay(input, tau): reads delayed slot `slot` of u */
  | { k: 'delay'; input: number; slot: number; tau: Expr; s?: Cols }

export const num = (v: number): Expr => ({ k: 'num', v })
export const ZERO = num(0)
export const ONE = num(1)
export const isNum = (e: Expr, v?: number): boolean => e.k === 'num' && (v === undefined || e.v === v)

export function add(a: Expr, b: Expr): Expr {
  if (a.k === 'num' && b.k === 'num') return num(a.v + b.v)
  if (isNum(a, 0)) return b
  if (isNum(b, 0)) return a
  if (b.k === 'neg') return sub(a, b.a)
  return { k: 'bin', op: '+', a, b }
}
export function sub(a: Expr, b: Expr): Expr {
  if (a.k === 'num' && b.k === 'num') return num(a.v - b.v)
  if (isNum(b, 0)) return a
  if (isNum(a, 0)) return neg(b)
  if (b.k === 'neg') return add(a, b.a)
  return { k: 'bin', op: '-', a, b }
}
export function neg(a: Expr): Expr {
  if (a.k === 'num') return num(-a.v)
  if (a.k === 'neg') return a.a
  return { k: 'neg', a }
}
export function mul(a: Expr, b: Expr): Expr {
  if (a.k === 'num' && b.k === 'num') return num(a.v * b.v)
  if (isNum(a, 0) || isNum(b, 0)) return ZERO
  if (isNum(a, 1)) return b
  if (isNum(b, 1)) return a
  if (isNum(a, -1)) return neg(b)
  if (isNum(b, -1)) return neg(a)
  if (a.k === 'neg') return neg(mul(a.a, b))
  if (b.k === 'neg') return neg(mul(a, b.a))
  return { k: 'bin', op: '*', a, b }
}
export function div(a: Expr, b: Expr): Expr {
  if (a.k === 'num' && b.k === 'num' && b.v !== 0) return num(a.v / b.v)
  if (isNum(a, 0)) return ZERO
  if (isNum(b, 1)) return a
  if (a.k === 'neg') return neg(div(a.a, b))
  return { k: 'bin', op: '/', a, b }
}
export function pow(a: Expr, b: Expr): Expr {
  if (isNum(b, 1)) return a
  if (isNum(b, 0)) return ONE
  return { k: 'bin', op: '^', a, b }
}
export function fn(f: FnName, ...args: Expr[]): Expr {
  return { k: 'fn', f, args }
}
export function cond(c: Expr, a: Expr, b: Expr): Expr {
  if (a.k === 'num' && b.k === 'num' && a.v === b.v) return a
  // (a < b ? 1 : 0) is the comparison itself
  if (c.k === 'cmp' && isNum(a, 1) && isNum(b, 0)) return c
  const cv = constValue(c)
  if (cv !== null) return cv ? a : b
  return { k: 'cond', c, a, b }
}
export function cmp(op: CmpOp, a: Expr, b: Expr): Expr {
  return { k: 'cmp', op, a, b }
}

/** The value of an expression made of numbers only, or null. */
export function constValue(e: Expr): number | null {
  switch (e.k) {
    case 'num': return e.v
    case 'neg': { const a = constValue(e.a); return a === null ? null : -a }
    case 'bin': {
      const a = constValue(e.a); const b = constValue(e.b)
      if (a === null || b === null) return null
      switch (e.op) { case '+': return a + b; case '-': return a - b; case '*': return a * b; case '/': return a / b; case '^': return Math.pow(a, b) }
      return null
    }
    default: return null
  }
}

/** Visit every node of a tree (pre-order). */
export function walk(e: Expr, f: (n: Expr) => void): void {
  f(e)
  switch (e.k) {
    case 'neg': walk(e.a, f); break
    case 'bin': case 'cmp': walk(e.a, f); walk(e.b, f); break
    case 'cond': walk(e.c, f); walk(e.a, f); walk(e.b, f); break
    case 'fn': for (const a of e.args) walk(a, f); break
    case 'lookup': walk(e.a, f); break
    case 'delay': walk(e.tau, f); break
    default: break
  }
}

/**
 * Rebuild a tree through the simplifying constructors, with the constants given by `constant`
 * inlined as numbers (so that products of constants fold).
 */
export function fold(e: Expr, constant: (i: number) => number): Expr {
  const r = (x: Expr) => fold(x, constant)
  switch (e.k) {
    case 'c': return num(constant(e.i))
    case 'neg': return neg(r(e.a))
    case 'bin': {
      const a = r(e.a), b = r(e.b)
      switch (e.op) { case '+': return add(a, b); case '-': return sub(a, b); case '*': return mul(a, b); case '/': return div(a, b); case '^': return a.k === 'num' && b.k === 'num' ? num(Math.pow(a.v, b.v)) : pow(a, b) }
      return e
    }
    case 'cmp': return cmp(e.op, r(e.a), r(e.b))
    case 'cond': return cond(r(e.c), r(e.a), r(e.b))
    case 'fn': return { k: 'fn', f: e.f, args: e.args.map(r) }
    case 'lookup': return { k: 'lookup', i: e.i, a: r(e.a), d: e.d }
    case 'delay': return { k: 'delay', input: e.input, slot: e.slot, tau: r(e.tau) }
    default: return e
  }
}
