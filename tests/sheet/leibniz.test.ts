// Derivative lines in Leibniz notation (dh/dt = …): read only at the head of an equation line,
// a division anywhere else; the older form h' = … still reads, with a warning at its line and a
// rewrite that gives the same model. The sheets are small invented examples; the expected values
// are worked by hand from the sheets' own equations.
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { checkModel, compileModel, flattenSheet, parseModel, partsResolver, rewriteOlderDerivatives, rewriteOlderLine } from '../../shared/sheet/index'
import { derivativeHead, derivativeName } from '../../shared/sheet/leibniz'
import { defaultPoint, MODELS_DIR, templates } from './helpers'

const TANK = `model "tank"
param k = 0.5 [1/s] in [0, 1]
state h = 2 [m]
dh/dt = -k * h
output level = h [m]`

/** the right side at the sheet's own start values */
function rhsAtStart(text: string): number[] {
  const c = compileModel(text)
  const pt = defaultPoint(c)
  const out = new Float64Array(c.nx)
  c.rhs(pt.t, pt.x, pt.p, pt.u, out)
  return [...out]
}

describe('derivative lines in Leibniz notation', () => {
  it('dh/dt = … is the derivative of the state h', () => {
    const r = checkModel(TANK)
    expect(r.diagnostics).toEqual([])
    const m = parseModel(TANK).model!
    expect(m.equations).toHaveLength(1)
    expect(m.equations[0]).toMatchObject({ state: 0, form: 'derivative', text: '-k * h', span: { line: 4, column: 1, endColumn: 6 } })
    // -k h at k = 0.5, h = 2 (by hand)
    expect(rhsAtStart(TANK)).toEqual([-1])
  })

  it('reads blanks around the slash, a name in parentheses and a name that starts with d', () => {
    expect(checkModel(TANK.replace('dh/dt', 'dh / dt')).diagnostics).toEqual([])
    expect(checkModel(TANK.replace('dh/dt', '  d(h)/dt')).diagnostics).toEqual([])
    const dd = 'state depth = 1 [m]\nparam k = 0.5 [1/s] fixed\nddepth/dt = -k * depth\noutput y = depth'
    expect(checkModel(dd).diagnostics).toEqual([])
    expect(rhsAtStart(dd)).toEqual([-0.5])
  })

  it('indexed states: one cell, a range of cells, and a cell in parentheses', () => {
    const cells = `const N = 3 [1]
param k = 0.5 [1/s] in [0, 1]
state T[1..N] = 1 [K]
dT[1]/dt = -k * T[1]
dT[i in 2..N-1]/dt = k * (T[i-1] - T[i])
d(T[3])/dt = k * (T[2] - 2 * T[3])
output y = T[N]`
    const r = checkModel(cells)
    expect(r.diagnostics).toEqual([])
    expect(r.summary.states.map((s) => s.name)).toEqual(['T[1]', 'T[2]', 'T[3]'])
    // at T = (1, 1, 1), k = 0.5: -0.5, 0, -0.5 (by hand)
    expect(rhsAtStart(cells)).toEqual([-0.5, 0, -0.5])
    const m = parseModel(cells).model!
    expect(m.equations[1].span).toEqual({ line: 5, column: 1, endColumn: 19 })
  })

  it('on a right side dx/dt is a division of the name dx by the name dt', () => {
    const division = `const dx = 3 [m]
const dt = 4 [s]
state y = 0 [m]
dy/dt = dx/dt
output o = y`
    expect(checkModel(division).diagnostics).toEqual([])
    // 3 m / 4 s = 0.75 m/s (by hand)
    expect(rhsAtStart(division)).toEqual([0.75])
    // a state's derivative is not a name of the right side: the message says how it is read
    const r = checkModel(TANK.replace('-k * h', '-k * h + dh/dt'))
    const d = r.diagnostics.find((x) => /unknown name 'dh'/.test(x.message))!
    expect(d).toMatchObject({ line: 4, column: 18, severity: 'error' })
    expect(d.message).toContain('dh/dt would be dh divided by dt')
    expect(d.message).toContain('written only at the head of its own line, dh/dt = …')
  })

  it('names the time t when another variable follows the slash, and the state dx of ddx/dt', () => {
    const wrongVar = checkModel(TANK.replace('dh/dt', 'dh/ds'))
    expect(wrongVar.diagnostics).toContainEqual(expect.objectContaining({ line: 4, column: 1, severity: 'error', message: 'a derivative is taken with respect to the time t: write dh/dt = …' }))
    const dState = checkModel('state dx = 1 [m]\ndx/dt = 0\noutput y = dx')
    expect(dState.diagnostics).toContainEqual(expect.objectContaining({ line: 2, message: "dx/dt: there is no state named 'x' (the state dx is written ddx/dt)" }))
  })

  it('works beside events and resets', () => {
    const ball = `param g = 9.81 [m/s^2] fixed
param e_r = 0.8 [1] in [0, 1]
state y = 1 [m]
state v = 0 [m/s]
dy/dt = v
dv/dt = -g
event y falls below 0 then v = -e_r * v "floor contact"
output height = y`
    const r = checkModel(ball)
    expect(r.diagnostics).toEqual([])
    expect(r.summary.events).toEqual([expect.objectContaining({ assigns: ['v'], line: 7 })])
    expect(rhsAtStart(ball)).toEqual([0, -9.81])
  })
})

describe("the older form x' = …", () => {
  const OLDER = TANK.replace('dh/dt', "h'")

  it('still compiles, to the same right side, with a warning at its line', () => {
    const r = checkModel(OLDER)
    expect(r.ok).toBe(true)
    expect(r.diagnostics).toEqual([{ line: 4, column: 1, endColumn: 3, severity: 'warning', message: "write dh/dt = … ; h' is the older form" }])
    expect(rhsAtStart(OLDER)).toEqual(rhsAtStart(TANK))
  })

  it('warns once per line for indexed states, naming the form to write', () => {
    const older = "const N = 3 [1]\nstate x[1..N] = 1 [m]\nx[1]' = 0\nx[i in 2..N]' = -x[i] [m/s]\noutput y = x[N]"
    const warn = checkModel(older).diagnostics.filter((d) => d.severity === 'warning')
    expect(warn).toEqual([
      { line: 3, column: 1, endColumn: 6, severity: 'warning', message: "write dx[1]/dt = … ; x[1]' is the older form" },
      { line: 4, column: 1, endColumn: 14, severity: 'warning', message: "write dx[i in 2..N]/dt = … ; x[i in 2..N]' is the older form" },
    ])
  })

  it('one line rewritten keeps its indentation, right side, description and comment', () => {
    expect(rewriteOlderLine("  h' = -k * h   # drains")).toBe('  dh/dt = -k * h   # drains')
    expect(rewriteOlderLine("T[i in 2..N]' = (T[i-1] - T[i]) / tau")).toBe('dT[i in 2..N]/dt = (T[i-1] - T[i]) / tau')
    expect(rewriteOlderLine("upper.h' = 0")).toBe('d(upper.h)/dt = 0')
    expect(rewriteOlderLine('dh/dt = 0')).toBeNull()
    expect(rewriteOlderLine("let a = 1 # h' = 2")).toBeNull()
    expect(rewriteOlderLine("# h' = 2")).toBeNull()
  })

  it('the whole sheet rewritten has no warning left and compiles to the same model', () => {
    const older = `model "two tanks"
param k = 0.5 [1/s] in [0, 1]
lookup f [m] -> [1] = { 0: 0,
  1: 1 }
state h1 = 2 [m]\r
state h2 = 1 [m]
h1' = -k * h1 * f(h1)
  h2' = k * (h1 - h2)   # fed by the first
output level = h2 [m]`
    expect(checkModel(older).diagnostics.map((d) => d.line)).toEqual([7, 8])
    const { text, lines } = rewriteOlderDerivatives(older)
    expect(lines).toEqual([7, 8])
    expect(text.split('\n')[6]).toBe('dh1/dt = -k * h1 * f(h1)')
    expect(text.split('\n')[7]).toBe('  dh2/dt = k * (h1 - h2)   # fed by the first')
    expect(text).toContain('state h1 = 2 [m]\r\n')
    expect(checkModel(text).diagnostics).toEqual([])
    expect(rhsAtStart(text)).toEqual(rhsAtStart(older))
  })

  it('a part stored in the older form adds no warning to the sheet that uses it', () => {
    const older = readFileSync(join(MODELS_DIR, 'parts', 'gravity-tank@1.sheet'), 'utf8').replace('\ndh/dt =', "\nh' =")
    expect(checkModel(older).diagnostics).toEqual([expect.objectContaining({ severity: 'warning', message: "write dh/dt = … ; h' is the older form" })])
    const host = 'model "one"\ntime [s]\npart up = gravity-tank@1\nfeed up.q_in = 1e-3\noutput y = up.level [m]'
    const resolvePart = partsResolver({ 'gravity-tank@1': older })!
    expect(checkModel(host, { resolvePart }).diagnostics).toEqual([])
    expect(flattenSheet(host, resolvePart).text).toContain('d(up.h)/dt = (up.q_in - up.q_out) / up.A')
  })
})

describe('the head of a derivative line', () => {
  it('is found only at the start of a line', () => {
    expect(derivativeHead('dh/dt = 1')).toMatchObject({ name: 'h', index: '', older: false })
    expect(derivativeHead('d(a.b[2])/dt = 1')).toMatchObject({ name: 'a.b', index: '[2]', older: false })
    expect(derivativeHead('dh/dtx = 1')).toBeNull()
    expect(derivativeHead('let q = dh/dt')).toBeNull()
    expect(derivativeName('T[3]')).toBe('dT[3]/dt')
    expect(derivativeName('up.h')).toBe('d(up.h)/dt')
  })
})

describe('template sheets', () => {
  it('write every derivative in Leibniz notation and check without a warning, parts included', () => {
    const parts = join(MODELS_DIR, 'parts')
    const lib = partsResolver({ 'gravity-tank@1': readFileSync(join(parts, 'gravity-tank@1.sheet'), 'utf8') })
    const sheets = [...templates(), ...['gravity-tank@1.sheet', 'tank-cascade.sheet'].map((file) => ({ file, text: readFileSync(join(parts, file), 'utf8') }))]
    for (const { file, text } of sheets) {
      expect(rewriteOlderDerivatives(text).lines, file).toEqual([])
      expect(checkModel(text, { resolvePart: lib }).diagnostics, file).toEqual([])
    }
  })
})
