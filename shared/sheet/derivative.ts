/**
 * Symbolic differentiation of a sheet expression with respect to one variable (a state,
 * parameter, input slot or the time), by the chain rule on our own tree. Smooth rules are the
 * textbook ones (Abramowitz and Stegun, "Handbook of Mathematical Functions", 1964, 4.x);
 * non-smooth functions use their piecewise derivative:
 *   abs'(a) = sign(a) (0 at a = 0), sign/floor/ceil/comparisons have derivative 0,
 *   min/max take the derivative of the active argument (the first one on a tie),
 *   c ? a : b takes the derivative of the active branch, a lookup the slope of its active
 *   segment (0 outside the table, where it is clamped).
 * mathjs's `derivative` is used only in the tests, as an independent check of the smooth rules.
 */
import { add, cmp, cond, div, type Expr, fn, mul, neg, num, ONE, pow, sub, ZERO, isNum, constValue } from './ast'

/** One state, parameter, input slot or the time. */
export type PointVar = { k: 'x' | 'p' | 'u'; i: number } | { k: 't' }
/**
 * A direction: the derivative of an expression along it is Σ ∂e/∂x_i·x[i] + Σ ∂e/∂p_i·p[i] +
 * Σ ∂e/∂u_i·u[i] + ∂e/∂t_sheet·t (forward-mode differentiation by the chain rule in one pass);
 * an index past the end of a seed list counts as 0.
 */
export type Direction = { k: 'dir'; x: Expr[]; p: Expr[]; u: Expr[]; t: Expr }
export type Var = PointVar | Direction

export interface DiffContext {
  /** d(let i)/dv: a temporary holding it, or ZERO */
  letDerivative(i: number): Expr
  /** d(temporary i)/dv, for differentiating a derivative again (default: ZERO) */
  tmpDerivative?(i: number): Expr
  /** d(t_seconds)/d(t_sheet) */
  secondsPerTimeUnit: number
  /**
   * derivatives already taken, by node: a subtree shared by reference is differentiated once and
   * its derivative shared too (without it, differentiating twice grows exponentially with depth)
   */
  memo?: Map<Expr, Expr>
}

export function diff(e: Expr, v: Var, ctx: DiffContext): Expr {
  const memo = ctx.memo
  if (memo === undefined) return diffNode(e, v, ctx)
  let d = memo.get(e)
  if (d === undefined) {
    d = diffNode(e, v, ctx)
    memo.set(e, d)
  }
  return d
}

function diffNode(e: Expr, v: Var, ctx: DiffContext): Expr {
  switch (e.k) {
    case 'num': case 'c': case 'm': return ZERO
    case 'tmp': return ctx.tmpDerivative ? ctx.tmpDerivative(e.i) : ZERO
    case 'x': case 'p': case 'u':
      if (v.k === 'dir') return v[e.k][e.i] ?? ZERO
      return v.k === e.k && v.i === e.i ? ONE : ZERO
    case 'delay':
      if (v.k === 'dir') return v.u[e.slot] ?? ZERO
      return v.k === 'u' && v.i === e.slot ? ONE : ZERO
    case 't':
      if (v.k === 'dir') return mul(num(ctx.secondsPerTimeUnit), v.t)
      return v.k === 't' ? num(ctx.secondsPerTimeUnit) : ZERO
    case 'let': return ctx.letDerivative(e.i)
    case 'neg': return neg(diff(e.a, v, ctx))
    case 'cmp': return ZERO
    case 'cond': return cond(e.c, diff(e.a, v, ctx), diff(e.b, v, ctx))
    case 'lookup': {
      const da = diff(e.a, v, ctx)
      if (e.d || isNum(da, 0)) return ZERO // the slope of a piecewise-linear table is piecewise constant
      return mul({ k: 'lookup', i: e.i, a: e.a, d: true }, da)
    }
    case 'bin': {
      const da = diff(e.a, v, ctx)
      const db = diff(e.b, v, ctx)
      switch (e.op) {
        case '+': return add(da, db)
        case '-': return sub(da, db)
        case '*': return add(mul(da, e.b), mul(e.a, db))
        case '/':
          // (a/b)' = a'/b - a b'/b^2
          if (isNum(db, 0)) return div(da, e.b)
          return sub(div(da, e.b), div(mul(e.a, db), mul(e.b, e.b)))
        case '^': return dpow(e.a, e.b, da, db)
      }
      return ZERO
    }
    case 'fn': return dfn(e, v, ctx)
  }
}

function dpow(a: Expr, b: Expr, da: Expr, db: Expr): Expr {
  if (isNum(da, 0) && isNum(db, 0)) return ZERO
  if (isNum(db, 0)) {
    // d(a^n) = n a^(n-1) a'
    const n = constValue(b)
    const nm1 = n !== null ? num(n - 1) : sub(b, ONE)
    return mul(mul(b, pow(a, nm1)), da)
  }
  // d(a^b) = a^b (b' ln a + b a'/a)
  const ab = { k: 'bin', op: '^', a, b } as Expr
  return mul(ab, add(mul(db, fn('log', a)), isNum(da, 0) ? ZERO : div(mul(b, da), a)))
}

function dfn(e: Extract<Expr, { k: 'fn' }>, v: Var, ctx: DiffContext): Expr {
  const a = e.args[0]
  const da = diff(a, v, ctx)
  const one = (): Expr => {
    switch (e.f) {
      case 'sin': return mul(fn('cos', a), da)
      case 'cos': return neg(mul(fn('sin', a), da))
      // tan' = 1 / cos^2 (mathjs answers sec(x)^2, which we do not emit)
      case 'tan': { const c = fn('cos', a); return div(da, mul(c, c)) }
      case 'asin': return div(da, fn('sqrt', sub(ONE, mul(a, a))))
      case 'acos': return neg(div(da, fn('sqrt', sub(ONE, mul(a, a)))))
      case 'atan': return div(da, add(ONE, mul(a, a)))
      case 'sinh': return mul(fn('cosh', a), da)
      case 'cosh': return mul(fn('sinh', a), da)
      case 'tanh': { const th = fn('tanh', a); return mul(sub(ONE, mul(th, th)), da) }
      case 'exp': return mul(e, da)
      case 'log': return div(da, a)
      case 'log10': return div(da, mul(a, num(Math.LN10)))
      case 'sqrt': return div(da, mul(num(2), e))
      case 'abs': return mul(fn('sign', a), da)
      case 'sign': case 'floor': case 'ceil': return ZERO
      default: return ZERO
    }
  }
  if (e.args.length === 1 && e.f !== 'hypot') {
    if (isNum(da, 0)) return ZERO
    return one()
  }
  if (e.f === 'hypot') {
    // d hypot(a1..an) = sum(ai ai') / hypot(a1..an)
    let s: Expr = ZERO
    for (const ai of e.args) s = add(s, mul(ai, diff(ai, v, ctx)))
    if (isNum(s, 0)) return ZERO
    return div(s, e)
  }
  const b = e.args[1]
  const db = diff(b, v, ctx)
  if (isNum(da, 0) && isNum(db, 0)) return ZERO
  switch (e.f) {
    case 'min': return cond(cmp('<=', a, b), da, db)
    case 'max': return cond(cmp('>=', a, b), da, db)
    case 'pow': return dpow(a, b, da, db)
    case 'atan2':
      // atan2(y, x)' = (x y' - y x') / (x^2 + y^2)
      return div(sub(mul(b, da), mul(a, db)), add(mul(a, a), mul(b, b)))
  }
  return ZERO
}
