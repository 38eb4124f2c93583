/**
 * Warns where a fitted parameter sits inside a comparison (`x >= h ? a : b`, `(x > h) * k`):
 * a comparison is a step, its slope with respect to the parameter is zero almost everywhere, so a
 * gradient-based fit never moves the parameter through it and it silently keeps its start value.
 * The warning points at the comparison and names the smooth built-ins of smooth.ts.
 */
import { type Expr, walk } from './ast'
import type { DiagnosticList } from './diagnostics'
import type { ParsedModel } from './model'

const ADVICE = 'use a smooth switch instead: soft_step(x, at, width), soft_switch(x, at, width, below, above), soft_max(a, b, width), soft_min(a, b, width) or soft_clamp(x, lo, hi, width) (see the language reference)'

export function checkComparisons(model: ParsedModel, diags: DiagnosticList): void {
  const fitted = model.params.map((p) => !p.fixed)
  // the fitted parameters each let depends on, directly or through other lets (in evaluation order)
  const letParams: Set<number>[] = model.lets.map(() => new Set<number>())
  for (const i of model.letOrder) letParams[i] = paramsIn(model.lets[i].expr, fitted, letParams)

  const visit = (e: Expr, line: number): void => {
    walk(e, (n) => {
      if (n.k !== 'cmp') return
      const ps = new Set([...paramsIn(n.a, fitted, letParams), ...paramsIn(n.b, fitted, letParams)])
      if (ps.size === 0) return
      const names = [...ps].map((i) => `'${model.params[i].name}'`).join(', ')
      const [column, endColumn] = n.s ?? [1, 2]
      diags.warning({ line, column, endColumn },
        `a comparison has zero slope: the fit cannot move ${names} through it and ${ps.size > 1 ? 'they keep their' : 'it keeps its'} start value here; ${ADVICE}`)
    })
  }
  for (const l of model.lets) visit(l.expr, l.span.line)
  for (const q of model.equations) visit(q.expr, q.span.line)
  for (const o of model.outputs) visit(o.expr, o.span.line)
}

function paramsIn(e: Expr, fitted: boolean[], letParams: Set<number>[]): Set<number> {
  const out = new Set<number>()
  walk(e, (n) => {
    if (n.k === 'p' && fitted[n.i]) out.add(n.i)
    else if (n.k === 'let') for (const p of letParams[n.i]) out.add(p)
  })
  return out
}
