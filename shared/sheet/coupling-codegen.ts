/**
 * Generation of `d2f`, the second directional derivative of a sheet's right-hand side: the exact
 * coupling term a stiff method needs when it integrates forward sensitivities with the states.
 *
 * The sensitivity s_j = ∂x/∂θ_j obeys s_j' = J s_j + ∂f/∂θ_j (+ ∂f/∂u·r for a delay parameter),
 * i.e. s_j' = D_w f, the derivative of f along the direction w = (s_j, q, r) in (x, p, u), with q the
 * unit vector of θ_j. The Jacobian of that right-hand side with respect to the states (s_j held),
 * M_j = ∂(J s_j + ∂f/∂θ_j)/∂x, and its ∂/∂t enter every stage of a Rosenbrock method (Hairer &
 * Wanner, Solving ODEs II, 2nd ed. 1996, Sec. IV.7: the method needs the exact Jacobian of the
 * whole system, which for the sensitivity system is block lower triangular with these blocks).
 * The generated function gives their product with a direction v = (v_x, τ, ν) in (x, t, u):
 *
 *   out_i = D_v D_w f_i = Σ ∂²f_i/∂a∂b · w_a · v_b,
 *
 * both derivatives taken symbolically in one forward pass each (derivative.ts, `Direction`: the
 * chain rule with seed expressions in place of unit vectors, as in forward-mode automatic
 * differentiation, A. Griewank & A. Walther, Evaluating Derivatives, 2nd ed. 2008, Ch. 3), each
 * `let` getting a temporary for D_w, D_v and D_v D_w of its value.
 *
 * Calling convention (the arrays are packed so that the generated code reads plain x/p/u slots):
 *   d2f(t, X, P, U, out):  X = [x (nx), s (nx), v_x (nx), τ],  P = [p (np), q (np)],
 *                          U = [u (nu+nd), r (nu+nd), ν (nu+nd)],  out: nx values.
 */
import { type Expr, isNum, ZERO } from './ast'
import type { Dialect, Emitter, SizeBudget } from './emitter'
import { diff, type DiffContext, type Direction } from './derivative'
import type { Span } from './diagnostics'
import type { ParsedModel } from './model'

export interface CouplingSource {
  m: ParsedModel
  em: Emitter
  dialect: Dialect
  budget: SizeBudget
  /** the right-hand sides, folded, in compiled units */
  f: Expr[]
  fSpans: Span[]
  letExpr: Expr[]
  /** lets the right-hand sides need, in evaluation order */
  order: number[]
  letLines: (order: number[]) => string
}

const leaf = (k: 'x' | 'p' | 'u', i: number): Expr => ({ k, i })
const range = (n: number, from: number, k: 'x' | 'p' | 'u'): Expr[] => Array.from({ length: n }, (_, i) => leaf(k, from + i))

function children(e: Expr): Expr[] {
  switch (e.k) {
    case 'neg': return [e.a]
    case 'bin': case 'cmp': return [e.a, e.b]
    case 'cond': return [e.c, e.a, e.b]
    case 'fn': return e.args
    case 'lookup': return [e.a]
    default: return [] // leaves; a delayed read is its input slot
  }
}

/**
 * Differentiating twice shares subtrees by reference (the memo of derivative.ts): each subtree used
 * more than once is computed once into a temporary, so the code grows linearly with the sheet
 * instead of exponentially with its nesting (common subexpressions by node identity; evaluating a
 * branch of c ? a : b that is not taken is harmless in JavaScript: Math functions do not throw).
 */
function hoistShared(roots: Expr[], firstTemp: number): { order: Expr[]; names: Map<Expr, string> } {
  const refs = new Map<Expr, number>()
  const count = (e: Expr): void => {
    const n = refs.get(e) ?? 0
    refs.set(e, n + 1)
    if (n === 0) for (const c of children(e)) count(c)
  }
  for (const r of roots) count(r)
  const names = new Map<Expr, string>()
  const order: Expr[] = []
  const done = new Set<Expr>()
  const visit = (e: Expr): void => {
    if (done.has(e)) return
    done.add(e)
    const cs = children(e)
    for (const c of cs) visit(c)
    if (cs.length > 0 && refs.get(e)! > 1) {
      names.set(e, `D${firstTemp + names.size}`)
      order.push(e)
    }
  }
  for (const r of roots) visit(r)
  return { order, names }
}

/**
 * The expressions of D_v D_w f, emitted: `outer` does not depend on w (the lets' D_v), `inner` does
 * (the lets' D_w and D_v D_w, then the outputs, written `target(i) = …`). `seeds` gives the text of
 * direction leaves that are not plain x/p/u slots.
 */
function couplingBody(c: CouplingSource, w: Direction, v: Direction | null, seeds: Map<Expr, string>, target: (i: number) => string): { outer: string[]; inner: string[] } {
  const { m, em, dialect, budget, f, fSpans, letExpr, order } = c
  const nl = m.lets.length
  // temporaries: D_w(let i) = tmp i, D_v(let i) = tmp nl + i, D_v D_w(let i) = tmp 2nl + i
  const hasW = new Set<number>()
  const hasV = new Set<number>()
  const hasVW = new Set<number>()
  const tmp = (i: number): Expr => ({ k: 'tmp', i })
  const spt = m.secondsPerTimeUnit
  const ctxW: DiffContext = { secondsPerTimeUnit: spt, letDerivative: (i) => (hasW.has(i) ? tmp(i) : ZERO), memo: new Map() }
  const ctxV: DiffContext | null = v === null ? null : {
    secondsPerTimeUnit: spt,
    letDerivative: (i) => (hasV.has(i) ? tmp(nl + i) : ZERO),
    tmpDerivative: (i) => (hasVW.has(i) ? tmp(2 * nl + i) : ZERO),
    memo: new Map(),
  }
  // in evaluation order: the lets' D_v (outer); each let's D_w, D_v D_w, then target(i) = D_v D_w f_i (inner)
  type Root = { target: string; e: Expr; span: Span; out: boolean }
  const outer: Root[] = []
  const inner: Root[] = []
  for (const li of order) {
    const span = m.lets[li].span
    const dw = diff(letExpr[li], w, ctxW)
    if (!isNum(dw, 0)) {
      hasW.add(li)
      inner.push({ target: `D${li}`, e: dw, span, out: false })
    }
    if (v === null || ctxV === null) continue
    const dv = diff(letExpr[li], v, ctxV)
    if (!isNum(dv, 0)) {
      hasV.add(li)
      outer.push({ target: `D${nl + li}`, e: dv, span, out: false })
    }
    if (hasW.has(li)) {
      const dvw = diff(dw, v, ctxV)
      if (!isNum(dvw, 0)) {
        hasVW.add(li)
        inner.push({ target: `D${2 * nl + li}`, e: dvw, span, out: false })
      }
    }
  }
  f.forEach((fi, i) => {
    const dw = diff(fi, w, ctxW)
    inner.push({ target: target(i), e: v === null || ctxV === null ? dw : diff(dw, v, ctxV), span: fSpans[i], out: true })
  })

  const { names } = hoistShared([...outer, ...inner].map((r) => r.e), 3 * nl)
  const emitted = new Set<Expr>()
  em.hoisted = new Map(seeds)
  try {
    // each root after the shared subtrees it uses (post-order), each shared subtree once
    const emitRoots = (roots: Root[]): string[] => {
      const body: string[] = []
      const emitShared = (e: Expr, span: Span): void => {
        if (emitted.has(e)) return
        emitted.add(e)
        for (const ch of children(e)) emitShared(ch, span)
        const name = names.get(e)
        if (name !== undefined) {
          body.push(budget.add(dialect.decl(name, em.emit(e)), span))
          em.hoisted!.set(e, name)
        }
      }
      for (const r of roots) {
        for (const ch of children(r.e)) emitShared(ch, r.span)
        const text = em.emit(r.e)
        body.push(budget.add(r.out ? `${r.target}${text};` : dialect.decl(r.target, text), r.span))
      }
      return body
    }
    return { outer: emitRoots(outer), inner: emitRoots(inner) }
  } finally {
    em.hoisted = null
  }
}

/** The source of `d2f` (see the module comment for its packed arguments). */
export function couplingFunction(c: CouplingSource): string {
  const { m, dialect } = c
  const nx = m.states.length
  const np = m.params.length
  const nuu = m.inputs.length + m.delays.length
  const w: Direction = { k: 'dir', x: range(nx, nx, 'x'), p: range(np, np, 'p'), u: range(nuu, nuu, 'u'), t: ZERO }
  const v: Direction = { k: 'dir', x: range(nx, 2 * nx, 'x'), p: [], u: range(nuu, 2 * nuu, 'u'), t: leaf('x', 3 * nx) }
  const { outer, inner } = couplingBody(c, w, v, new Map(), (i) => `out[${i}]=`)
  return [dialect.open('d2f'), dialect.decl('ts', `t*${dialect.spt}`), dialect.unused('ts'), c.letLines(c.order), ...outer, ...inner, '}'].join('\n')
}

/**
 * The source of `d2fs` (JavaScript only): the coupling term of all ns sensitivities in one call,
 * added to the stage vector in place, reading the point and the directions where they lie:
 *
 *   d2fs(t, x, p, u, v, vt, ns, out):  x = [x, s_1, …, s_ns] (the augmented state, nx(1 + ns)),
 *     p = [p, q_1, …, q_ns] (np(1 + ns)), u = [u, ν, r_1, …, r_ns] (nu+nd each), v: the states'
 *     direction (its first nx values), vt: τ;  out[(j+1)nx + i] += (D_v D_w_j f)_i.
 *
 * The lets and their D_v are computed once for all j (they do not depend on w); the direction
 * leaves are read at each j's offsets, so nothing is copied per sensitivity.
 */
export function couplingAllFunction(c: CouplingSource): string {
  return allSensitivities(c, true)
}

/**
 * The source of `dfs` (JavaScript only): the sensitivities' right-hand sides D_w_j f = ∂f/∂x·s_j +
 * ∂f/∂p·q_j + ∂f/∂u·r_j of all ns sensitivities in one call, one forward pass each (the first
 * directional derivative of the same construction), without forming ∂f/∂x or ∂f/∂p:
 *
 *   dfs(t, x, p, u, ns, out):  x = [x, s_1, …, s_ns], p = [p, q_1, …], u = [u, ν (unused), r_1, …];
 *     out[(j+1)nx + i] = (D_w_j f)_i.
 */
export function sensitivityRhsFunction(c: CouplingSource): string {
  return allSensitivities(c, false)
}

function allSensitivities(c: CouplingSource, second: boolean): string {
  const { m, dialect } = c
  const nx = m.states.length
  const np = m.params.length
  const nuu = m.inputs.length + m.delays.length
  // direction leaves with out-of-range indices, emitted through `seeds` (a leaf emitted any other way
  // would read x[-1] and give NaN, which the tests would see, rather than a plausible wrong number)
  const seeds = new Map<Expr, string>()
  const seeded = (n: number, k: 'x' | 'p' | 'u', text: (i: number) => string): Expr[] =>
    Array.from({ length: n }, (_, i) => {
      const e = leaf(k, -1 - i)
      seeds.set(e, text(i))
      return e
    })
  const vt = leaf('x', -1)
  seeds.set(vt, 'vt')
  const w: Direction = { k: 'dir', x: seeded(nx, 'x', (i) => `x[o+${i}]`), p: seeded(np, 'p', (i) => `p[po+${i}]`), u: seeded(nuu, 'u', (i) => `u[uo+${i}]`), t: ZERO }
  const v: Direction | null = second ? { k: 'dir', x: seeded(nx, 'x', (i) => `v[${i}]`), p: [], u: seeded(nuu, 'u', (i) => `u[${nuu + i}]`), t: vt } : null
  const { outer, inner } = couplingBody(c, w, v, seeds, (i) => (second ? `out[o+${i}]+=` : `out[o+${i}]=`))
  return [
    second ? 'function d2fs(t,x,p,u,v,vt,ns,out){' : 'function dfs(t,x,p,u,ns,out){',
    dialect.decl('ts', `t*${dialect.spt}`),
    c.letLines(c.order),
    ...outer,
    `for(let j=0;j<ns;j++){const o=(j+1)*${nx},po=(j+1)*${np},uo=(j+2)*${nuu};`,
    ...inner,
    '}',
    '}',
  ].join('\n')
}
