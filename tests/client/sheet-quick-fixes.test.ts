/**
 * The editor's quick fix for the older derivative form (src/composables/sheetQuickFixes.ts), fed
 * with the shared check's own diagnostics as the editor shows them: the fix of one line, the fix of
 * every line, and a sheet that after the fixes checks clean and compiles to the same right side.
 * The sheet is a small invented example.
 */
import { describe, expect, it } from 'vitest'
import { checkModel, compileModel } from '../../shared/sheet/index'
import { type FixContext, type FixMarker, olderDerivativeFixes, SHEET_QUICK_FIXES } from '../../src/composables/sheetQuickFixes'

const OLDER = `model "two tanks"
param k = 0.5 [1/s] in [0, 1]
state h1 = 2 [m]
state h2 = 1 [m]
h1' = -k * h1
  h2' = k * (h1 - h2)   # fed by the first
output level = h2 [m]`

function context(text: string, line: number): FixContext {
  const all: FixMarker[] = checkModel(text).diagnostics
  return { here: all.filter((d) => d.line === line), all, lineText: (n) => text.split('\n')[n - 1] }
}

function apply(text: string, lines: { line: number; text: string }[]): string {
  const out = text.split('\n')
  for (const l of lines) out[l.line - 1] = l.text
  return out.join('\n')
}

function rhs(text: string): number[] {
  const c = compileModel(text)
  const out = new Float64Array(c.nx)
  c.rhs(0, Float64Array.from(c.states.map((s) => s.initial)), Float64Array.from(c.params.map((p) => p.value)), new Float64Array(c.nu), out)
  return [...out]
}

describe('quick fix: the older derivative form', () => {
  it('is offered on a warned line: this line, and every such line of the sheet', () => {
    const fixes = olderDerivativeFixes(context(OLDER, 6))
    expect(fixes.map((f) => f.title)).toEqual(['Rewrite as dh2/dt = …', "Rewrite all 2 x' lines as dx/dt"])
    expect(fixes[0].preferred).toBe(true)
    expect(fixes[0].lines).toEqual([{ line: 6, text: '  dh2/dt = k * (h1 - h2)   # fed by the first' }])
    expect(fixes[1].lines.map((l) => l.line)).toEqual([5, 6])
  })

  it('one fix leaves the other warning; the fix of every line leaves none and the same model', () => {
    const one = apply(OLDER, olderDerivativeFixes(context(OLDER, 5))[0].lines)
    expect(checkModel(one).diagnostics.map((d) => d.line)).toEqual([6])
    const every = apply(OLDER, olderDerivativeFixes(context(OLDER, 5))[1].lines)
    expect(checkModel(every).diagnostics).toEqual([])
    // -k h1 = -1 and k (h1 - h2) = 0.5 at the start values (by hand)
    expect(rhs(every)).toEqual([-1, 0.5])
    expect(rhs(OLDER)).toEqual([-1, 0.5])
  })

  it('is not offered where there is no such warning', () => {
    const clean = OLDER.replace("h1'", 'dh1/dt').replace("h2'", 'dh2/dt')
    expect(SHEET_QUICK_FIXES.flatMap((p) => p(context(clean, 5)))).toEqual([])
    const wrong = clean.replace('-k * h1', '-kk * h1')
    expect(SHEET_QUICK_FIXES.flatMap((p) => p(context(wrong, 5))).filter((f) => /older|x'/.test(f.title))).toEqual([])
  })
})
