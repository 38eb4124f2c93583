// Every diagnostic of the sheet language, each from a sheet that must fail with that message at
// that place (line, column range). The sheets are small invented examples.
import { describe, expect, it } from 'vitest'
import { checkModel, parseModel } from '../../shared/sheet/index'
import { errors } from './helpers'

const OK = `model "tank"
param k = 0.1 [1/s] in [0, 1]
state h = 1 [m]
dh/dt = -k * h
output level = h [m]`

function expectError(text: string, line: number, message: RegExp, column?: number) {
  const errs = errors(text)
  const hit = errs.find((d) => d.line === line && message.test(d.message))
  expect(hit, `expected an error /${message.source}/ at line ${line}; got ${JSON.stringify(errs)}`).toBeDefined()
  if (column !== undefined) expect(hit!.column).toBe(column)
  expect(hit!.endColumn).toBeGreaterThan(hit!.column)
  expect(checkModel(text).ok).toBe(false)
  expect(parseModel(text).model).toBeNull()
}

describe('sheet diagnostics', () => {
  it('the base sheet is clean', () => {
    const r = checkModel(OK)
    expect(r.diagnostics).toEqual([])
    expect(r.ok).toBe(true)
  })

  it('unknown name, with a did-you-mean', () => {
    const text = OK.replace("dh/dt = -k * h", "dh/dt = -kk * h")
    expectError(text, 4, /unknown name 'kk' \(did you mean 'k'\?\)/, 10)
    const d = errors(text).find((x) => /kk/.test(x.message))!
    expect(d.endColumn).toBe(12)
  })

  it('unknown name far from everything gets no suggestion', () => {
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -zeta_long * h"), 4, /^unknown name 'zeta_long'$/)
  })

  it('duplicate name', () => {
    expectError(OK.replace('state h = 1 [m]', 'state h = 1 [m]\nconst k = 2 [1/s]'), 4, /duplicate name 'k': already declared as a param at line 2/, 7)
  })

  it('state without derivative', () => {
    expectError(OK.replace('state h = 1 [m]', 'state h = 1 [m]\nstate v = 0 [m/s]'), 4, /state v has no derivative: add dv\/dt = /, 7)
  })

  it('derivative of a non-state', () => {
    expectError(OK + "\ndk/dt = 0", 6, /dk\/dt: 'k' is a param, not a state/, 1)
    expectError(OK + "\ndq/dt = 0", 6, /there is no state named 'q'/)
  })

  it('second equation for a state', () => {
    expectError(OK + "\ndh/dt = 0", 6, /second equation for h \(the first is at line 4\)/)
  })

  it('let cycle, naming the cycle', () => {
    const text = OK.replace("dh/dt = -k * h", "let a = b + h\nlet b = c * 2\nlet c = a - 1\ndh/dt = -k * a")
    expectError(text, 4, /let cycle: a -> b -> c -> a/, 5)
  })

  it('bounds reversed', () => {
    expectError(OK.replace('in [0, 1]', 'in [1, 0]'), 2, /bounds reversed or empty: the lower bound 1 must be below the upper bound 0/, 24)
  })

  it('value outside bounds', () => {
    expectError(OK.replace('k = 0.1', 'k = 5'), 2, /value 5 is outside the bounds \[0, 1\]/, 11)
    expectError(OK.replace('state h = 1 [m]', 'state h = 1 [m] estimate in [2, 3]'), 3, /value 1 is outside the bounds/)
  })

  it('missing value', () => {
    expectError(OK.replace('param k = 0.1 [1/s]', 'param k [1/s]'), 2, /missing value: write param k = 1 \[unit\]/, 9)
    expectError(OK.replace('state h = 1 [m]', 'state h = [m]'), 3, /missing value: expected the value of h as a number/, 11)
  })

  it('malformed number', () => {
    expectError(OK.replace('k = 0.1', 'k = 0.1.2'), 2, /malformed number '0.1.2'/, 11)
    expectError(OK.replace('k = 0.1', 'k = 1e'), 2, /malformed number '1e'/)
    expectError(OK.replace('in [0, 1]', 'in [0, 1x]'), 2, /malformed number '1x' for the upper bound/, 28)
  })

  it('unknown unit, with a suggestion for a wrong case', () => {
    expectError(OK.replace('[1/s]', '[1/sec2]'), 2, /unknown unit 'sec2'/, 15)
    expectError(OK.replace('state h = 1 [m]', 'state h = 1 [Ohm]'), 3, /^unknown unit 'Ohm'; did you mean 'ohm'\?$/)
  })

  it('unknown function, with a did-you-mean', () => {
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * sqr(h)"), 4, /unknown function 'sqr' \(did you mean 'sqrt'\?\)/, 14)
  })

  it('calling something that is not a function', () => {
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k(h)"), 4, /k is a param, not a function/)
  })

  it('reserved word used as a name', () => {
    expectError(OK.replace('param k', 'param sin'), 2, /'sin' is a reserved word/, 7)
    expectError(OK.replace('state h', 'state t'), 3, /'t' is a reserved word/)
    expectError(OK.replace('param k', 'param delay'), 2, /'delay' is a reserved word/)
  })

  it('lookup points not increasing', () => {
    const text = OK.replace("dh/dt = -k * h", "lookup f [m] -> [1] = { 0: 0, 2: 1, 1: 3 }\ndh/dt = -k * h * f(h)")
    expectError(text, 4, /lookup points must increase: 1 follows 2/, 37)
  })

  it('delay of a non-input', () => {
    const text = OK.replace("dh/dt = -k * h", "param tau = 1 [s] in [0, 10]\ndh/dt = -k * delay(h, tau)")
    expectError(text, 5, /delay applies only to inputs: 'h' is a state/, 20)
  })

  it('delay whose tau is not a param or const, or may go negative', () => {
    const base = OK.replace("dh/dt = -k * h", "input q = 1 [m/s]\ndh/dt = delay(q, TAU)")
    expectError(base.replace('TAU', '3'), 5, /the delay tau must be the name of a param or const/)
    expectError(base.replace('TAU', 'h'), 5, /the delay tau must be a param or const; 'h' is a state/)
    expectError(base.replace('input q', 'param tau = 1 [s] in [-1, 10]\ninput q').replace('TAU', 'tau'), 6, /the delay tau must stay >= 0/)
    expectError(base.replace('input q', 'param tau = 1 [m] in [0, 10]\ninput q').replace('TAU', 'tau'), 6, /the delay tau must be a time/)
  })

  it('empty sheet', () => {
    for (const text of ['', '   \n\n', '# only a comment\n']) {
      const errs = errors(text)
      expect(errs).toHaveLength(1)
      expect(errs[0]).toMatchObject({ line: 1, column: 1, message: expect.stringMatching(/^empty sheet/) })
    }
  })

  it('a sheet without states', () => {
    expectError('model "nothing"\nparam k = 1 [1] in [0, 2]', 1, /declares no state/)
  })

  it('output naming nothing', () => {
    expectError(OK.replace('output level = h [m]', 'output level'), 5, /output level names nothing/, 8)
    expectError(OK.replace('output level = h [m]', 'output level = [m]'), 5, /output level names nothing/)
  })

  it('output whose expression names an unknown symbol', () => {
    expectError(OK.replace('output level = h [m]', 'output level = hh [m]'), 5, /unknown name 'hh' \(did you mean 'h'\?\)/, 16)
  })

  it('unknown keyword and unknown statement', () => {
    expectError(OK + '\nparm q = 1', 6, /^unknown keyword 'parm'; did you mean 'param'\?$/, 1)
    expectError(OK + '\nq = h * 2', 6, /unknown statement: to define 'q' write let q = /)
  })

  it('modifiers that do not belong to the declaration', () => {
    expectError(OK.replace('state h = 1 [m]', 'state h = 1 [m] fixed'), 3, /unexpected 'fixed' in a state declaration/)
  })

  it('syntax errors point into the expression', () => {
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * "), 4, /syntax error/)
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * (h"), 4, /unclosed '\('/)
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * h)"), 4, /unmatched '\)'/, 15)
  })

  it('implicit multiplication is refused', () => {
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -2 k * h"), 4, /missing operator/)
  })

  it('operators outside the whitelist are refused', () => {
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * h mod 2"), 4, /operator 'mod' is not allowed/)
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * h!"), 4, /operator '!' is not allowed/)
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * h < 1 < 2"), 4, /chained comparisons/)
  })

  it('wrong number of arguments', () => {
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * atan2(h)"), 4, /atan2 takes 2 arguments, got 1/)
    expectError(OK.replace("dh/dt = -k * h", "dh/dt = -k * max(h)"), 4, /max needs at least two arguments/)
  })

  it('discrete and continuous forms do not mix', () => {
    expectError(OK.replace("dh/dt = -k * h", 'next h = h * 0.9'), 4, /next-equations need a sample line/)
    expectError(OK.replace('model "tank"', 'model "tank"\nsample 1 [s]'), 5, /this sheet is discrete-time/)
  })

  it('time unit must be s, min or h', () => {
    expectError(OK.replace('model "tank"', 'model "tank"\ntime [d]'), 2, /the time unit must be s, min or h, not 'd'/)
  })

  it('offset units only for absolute quantities', () => {
    expectError(OK.replace('[1/s]', '[W/degC]'), 2, /offset unit 'degC' is allowed only on its own/)
  })

  it('several problems are all reported, in line order, without throwing', () => {
    const text = "state h = 1 [m]\ndh/dt = -kk * h\nparam k = 2 [1/s] in [3, 1]\nbogus line here"
    const errs = errors(text)
    expect(errs.map((e) => e.line)).toEqual([2, 3, 4])
  })

  it('warnings do not make a sheet fail', () => {
    const r = checkModel(OK.replace(' in [0, 1]', ''))
    expect(r.ok).toBe(true)
    expect(r.diagnostics).toEqual([expect.objectContaining({ severity: 'warning', line: 2, message: expect.stringMatching(/neither bounds nor fixed/) })])
  })
})
