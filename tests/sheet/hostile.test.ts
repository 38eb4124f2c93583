// Hostile input: every case must give diagnostics, never throw, never execute anything, never hang.
import { afterEach, describe, expect, it } from 'vitest'
import { checkModel, parseModel, tryCompileModel } from '../../shared/sheet/index'
import { MAX_CHAIN, MAX_DEPTH } from '../../shared/sheet/expression'
import { MAX_GENERATED_CHARS } from '../../shared/sheet/emitter'

const g = globalThis as unknown as Record<string, unknown>
afterEach(() => { delete g.__pewterPwned })

function hostile(text: string): ReturnType<typeof checkModel> {
  g.__pewterPwned = false
  let r!: ReturnType<typeof checkModel>
  expect(() => { r = checkModel(text) }).not.toThrow()
  expect(() => parseModel(text)).not.toThrow()
  expect(() => tryCompileModel(text)).not.toThrow()
  expect(g.__pewterPwned).toBe(false)
  return r
}

const wrap = (expr: string) => `state x = 1 [m]\ndx/dt = ${expr}\noutput y = x`

describe('hostile sheets', () => {
  const exprs: [string, RegExp][] = [
    ['constructor', /unknown name 'constructor'/],
    ['__proto__', /unknown name '__proto__'/],
    ['this', /unknown name 'this'/],
    ['process', /unknown name 'process'/],
    ['x.constructor', /unknown name 'x.constructor'/],
    ['constructor.constructor("globalThis.__pewterPwned = true")()', /text in quotes/],
    ['require("fs")', /text in quotes/],
    ['require(x)', /unknown function 'require'/],
    ['import(x)', /unknown function 'import'/],
    ['globalThis', /unknown name 'globalThis'/],
    ['x; globalThis.__pewterPwned = 1', /only one equation per line/],
    ["x + 'abc'", /text in quotes/],
    ['x + `abc`', /text in quotes/],
    ['evaluate(x)', /unknown function 'evaluate'/],
    ['f(x) = x', /function definitions are not allowed/],
    ['x = 1', /assignment/],
    ['[1, 2]', /matrices are not allowed/],
    ['{a: 1}', /not allowed in an expression/],
    ['x ? 1 : 2 ; 3', /only one equation per line/],
    ['x \\ 2', /unexpected character/],
    ['x $ 2', /unexpected character/],
    ['x.__proto__', /unknown name 'x.__proto__'/],
  ]
  for (const [e, msg] of exprs) {
    it(`dx/dt = ${e}`, () => {
      const r = hostile(wrap(e))
      expect(r.ok).toBe(false)
      expect(r.diagnostics.some((d) => d.severity === 'error' && d.line === 2 && msg.test(d.message)), JSON.stringify(r.diagnostics)).toBe(true)
    })
  }

  it('reserved and host words cannot be declared', () => {
    for (const w of ['constructor', '__proto__', 'prototype', 'Infinity', 'NaN', 'true', 'mod', 'e', 'pi']) {
      const r = hostile(`param ${w} = 1 [1] in [0, 2]\nstate x = 1 [m]\ndx/dt = 0\noutput y = x`)
      expect(r.diagnostics.some((d) => d.line === 1 && /reserved word/.test(d.message)), w).toBe(true)
    }
  })

  it('names a JavaScript object holds by default resolve to nothing', () => {
    for (const w of ['toString', 'valueOf', 'hasOwnProperty']) {
      const r = hostile(wrap(`${w}`))
      expect(r.diagnostics.some((d) => new RegExp(`unknown name '${w}'`).test(d.message))).toBe(true)
      const r2 = hostile(wrap(`${w}(x)`))
      expect(r2.diagnostics.some((d) => new RegExp(`unknown function '${w}'`).test(d.message))).toBe(true)
    }
  })

  it('statement separators and strings in declarations', () => {
    const r = hostile('state x = 1 [m]; globalThis.__pewterPwned = true\nx\' = 0')
    expect(r.ok).toBe(false)
    const r2 = hostile('param k = "1" [1] in [0, 2]\nstate x = 1 [m]\nx\' = 0')
    expect(r2.diagnostics.some((d) => d.line === 1 && /missing value/.test(d.message))).toBe(true)
  })

  it('a very long line', () => {
    const r = hostile(wrap('x' + ' + x'.repeat(50_000)))
    expect(r.diagnostics.some((d) => d.line === 2 && /line is too long/.test(d.message))).toBe(true)
    const r2 = hostile(wrap('x' + ' + x'.repeat(1500)))
    expect(r2.diagnostics.some((d) => d.line === 2 && /expression is too long/.test(d.message))).toBe(true)
  })

  it('a long but legal sum compiles', () => {
    const r = tryCompileModel(`param k = 1 [1/s] in [0, 2]\nstate x = 1 [m]\ndx/dt = ${Array(600).fill('k*x').join(' - ')}\noutput y = x`)
    expect(r.compiled).not.toBeNull()
  })

  it('1 000-deep parentheses', () => {
    const r = hostile(wrap('('.repeat(1000) + 'x' + ')'.repeat(1000)))
    expect(r.diagnostics.some((d) => d.line === 2 && /nested too deeply/.test(d.message))).toBe(true)
  })

  it('deep chains of unary minus and powers do not blow the stack', () => {
    hostile(wrap('-'.repeat(1990) + 'x'))
    hostile(wrap(Array(1000).fill('x').join('^')))
  })

  it('a chain of powers counts one level per ^ and is refused past the depth limit at its line and column', () => {
    // dimensionless state so that x^x is a legal power: only the depth refuses it
    const sheet = (n: number) => `param k = 1 [1/s] in [0, 2]\nstate x = 1 [1]\ndx/dt = k*(${Array(n).fill('x').join('^')})\noutput y = x`
    expect(tryCompileModel(sheet(MAX_DEPTH)).compiled).not.toBeNull()
    for (const n of [MAX_DEPTH + 1, 1000, 1990]) {
      const r = hostile(sheet(n))
      expect(r.ok).toBe(false)
      const d = r.diagnostics.find((x) => /nested too deeply/.test(x.message))
      expect(d, JSON.stringify(r.diagnostics)).toBeDefined()
      expect(d!.message).toContain(`more than ${MAX_DEPTH} levels`)
      // line 3, at the x where the chain passes the limit: "dx/dt = k*(" is 11 characters, the i-th x is at 12 + 2(i-1)
      expect(d!.line).toBe(3)
      expect(d!.column).toBe(12 + 2 * (MAX_DEPTH - 1))
      expect(tryCompileModel(sheet(n)).compiled).toBeNull()
    }
  })

  it('a chain of + or * is one level but at most MAX_CHAIN operators', () => {
    const sum = (n: number) => `param k = 1 [1/s] in [0, 2]\nstate x = 1 [1]\ndx/dt = k*(${Array(n).fill('x').join('+')})\noutput y = x`
    expect(checkModel(sum(MAX_CHAIN + 1)).ok).toBe(true)
    const r = hostile(sum(MAX_CHAIN + 2))
    expect(r.diagnostics.some((d) => d.line === 3 && /more than 1000\)/.test(d.message) && /chain of \+ -/.test(d.message)), JSON.stringify(r.diagnostics)).toBe(true)
  })

  it('generated code has a size limit, reported at the equation that passes it', () => {
    // 40 states whose right sides are 60-deep power chains: each passes the depth check, together they
    // would generate megabytes of derivative code
    const lines = Array.from({ length: 40 }, (_, i) => `state x${i} = 1 [1]\nx${i}' = k*(${Array(60).fill(`x${i}`).join('^')})`)
    const text = `param k = 1 [1/s] in [0, 2]\n${lines.join('\n')}\noutput y = x1`
    expect(checkModel(text).ok).toBe(true)
    const r = tryCompileModel(text)
    expect(r.compiled).toBeNull()
    const d = r.diagnostics.find((x) => /too large/.test(x.message))
    expect(d, JSON.stringify(r.diagnostics)).toBeDefined()
    expect(d!.message).toContain(`more than ${MAX_GENERATED_CHARS} characters`)
    expect(d!.line).toBeGreaterThan(2)
    expect(d!.line % 2).toBe(1) // an equation line (declarations are on even lines)
  })

  it('10 000 declarations', () => {
    const text = Array.from({ length: 10_000 }, (_, i) => `param p${i} = ${i} [1/s] in [0, 1e6]`).join('\n') + "\nstate x = 1 [m]\ndx/dt = -p1 * x\noutput y = x"
    const r = hostile(text)
    expect(r.ok).toBe(true)
    expect(r.summary.parameters).toHaveLength(10_000)
  })

  it('10 000 duplicate declarations stop at a bounded number of messages', () => {
    const text = Array.from({ length: 10_000 }, () => 'param p = 1 [1/s] in [0, 2]').join('\n')
    const r = hostile(text)
    expect(r.ok).toBe(false)
    expect(r.diagnostics.length).toBeLessThanOrEqual(201)
    expect(r.diagnostics[r.diagnostics.length - 1].message).toMatch(/too many problems/)
  })

  it('10 000 chained lets', () => {
    const text = 'state x = 1 [m]\nlet a0 = x\n' + Array.from({ length: 10_000 }, (_, i) => `let a${i + 1} = a${i} * 0.999`).join('\n') + "\nparam k = 1 [1/s] in [0, 2]\ndx/dt = -k * a10000\noutput y = x"
    const r = hostile(text)
    expect(r.ok).toBe(true)
  })

  it('binary garbage', () => {
    let s = 1
    const bytes = Array.from({ length: 20_000 }, () => { s = (s * 1103515245 + 12345) % 2147483648; return String.fromCharCode(s % 256) }).join('')
    const r = hostile(bytes)
    expect(r.ok).toBe(false)
    expect(r.diagnostics.length).toBeGreaterThan(0)
    expect(r.diagnostics.every((d) => d.line >= 1 && d.column >= 1)).toBe(true)
  })

  it('text that is not a string', () => {
    for (const v of [null, undefined, 42, {}, ['x']]) {
      const r = checkModel(v as unknown as string)
      expect(r.ok).toBe(false)
      expect(r.diagnostics[0].message).toMatch(/must be text/)
    }
  })

  it('unicode look-alikes and control characters are refused with their place', () => {
    const r = hostile(wrap('x \u2212 1'))
    expect(r.diagnostics.some((d) => d.line === 2 && d.column === 11 && /unexpected character/.test(d.message))).toBe(true)
    const r2 = hostile("state x = 1 [m]\ndx/dt = x\u0000\noutput y = x")
    expect(r2.diagnostics.some((d) => d.line === 2 && d.column === 10 && /control or binary/.test(d.message))).toBe(true)
  })
})
