/**
 * Smooth switches and limits. A comparison or `?:` has zero slope with respect to a parameter, so a
 * fit cannot move a threshold written that way; these built-ins bend smoothly instead and are
 * written out here in elementary functions, so the compiler's chain rule (derivative.ts) gives their
 * exact derivatives and the unit check sees ordinary sums, quotients and hypot/tanh arguments.
 *
 *   soft_step(x, at, width)                = 1/2 + 1/2 tanh(2 (x - at) / width)
 *   soft_switch(x, at, width, below, above) = below + (above - below) soft_step(x, at, width)
 *   soft_max(a, b, width)                  = (a + b + hypot(a - b, width)) / 2
 *   soft_min(a, b, width)                  = (a + b - hypot(a - b, width)) / 2
 *   soft_clamp(x, lo, hi, width)           = soft_min(soft_max(x, lo, width), hi, width)
 *
 * soft_max/soft_min are the hyperbolic smoothing of max(a, b) = (a + b + |a - b|) / 2 with |d|
 * replaced by sqrt(d² + width²) (Chen and Mangasarian, "A class of smoothing functions for
 * nonlinear and mixed complementarity problems", Comput. Optim. Appl. 5, 1996): width 0 gives the
 * exact max/min, the largest departure is width/2 where a = b. soft_step is the logistic curve
 * written with tanh (logistic(z) = 1/2 + 1/2 tanh(z/2)): 0.12 to 0.88 over `width` around `at`.
 */
import { add, type Cols, div, type Expr, fn, mul, num, sub } from './ast'

export const SMOOTH_FUNCTIONS = {
  soft_step: ['x', 'at', 'width'],
  soft_switch: ['x', 'at', 'width', 'below', 'above'],
  soft_max: ['a', 'b', 'width'],
  soft_min: ['a', 'b', 'width'],
  soft_clamp: ['x', 'lo', 'hi', 'width'],
} as const satisfies Record<string, readonly string[]>

export type SmoothName = keyof typeof SMOOTH_FUNCTIONS
export const SMOOTH_NAMES = Object.keys(SMOOTH_FUNCTIONS) as SmoothName[]

export function isSmoothName(name: string): name is SmoothName {
  return Object.prototype.hasOwnProperty.call(SMOOTH_FUNCTIONS, name)
}

/** The call's signature as written in messages and help, e.g. `soft_step(x, at, width)`. */
export function smoothSignature(name: SmoothName): string {
  return `${name}(${SMOOTH_FUNCTIONS[name].join(', ')})`
}

/** Every synthesized node points at the whole call, so a unit message lands on it. */
function at(e: Expr, s: Cols | undefined): Expr {
  return { ...e, s } as Expr
}

function softStep(x: Expr, a: Expr, w: Expr, s: Cols | undefined): Expr {
  const z = at(div(at(mul(num(2), at(sub(x, a), s)), s), w), s)
  return at(add(num(0.5), at(mul(num(0.5), at(fn('tanh', z), s)), s)), s)
}

function softMaxMin(sign: 1 | -1, a: Expr, b: Expr, w: Expr, s: Cols | undefined): Expr {
  const h = at(fn('hypot', at(sub(a, b), s), w), s)
  const sum = at(add(a, b), s)
  return at(div(at(sign > 0 ? add(sum, h) : sub(sum, h), s), num(2)), s)
}

/** The call written out in elementary functions; `args` has the length SMOOTH_FUNCTIONS names. */
export function expandSmooth(name: SmoothName, args: Expr[], s: Cols | undefined): Expr {
  switch (name) {
    case 'soft_step': return softStep(args[0], args[1], args[2], s)
    case 'soft_switch': {
      const [x, a, w, below, above] = args
      return at(add(below, at(mul(at(sub(above, below), s), softStep(x, a, w, s)), s)), s)
    }
    case 'soft_max': return softMaxMin(1, args[0], args[1], args[2], s)
    case 'soft_min': return softMaxMin(-1, args[0], args[1], args[2], s)
    case 'soft_clamp': {
      const [x, lo, hi, w] = args
      return softMaxMin(-1, softMaxMin(1, x, lo, w, s), hi, w, s)
    }
  }
}
