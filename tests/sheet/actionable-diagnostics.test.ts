// Diagnostics a newcomer can act on: unit mismatches in the sheet's declared units, did-you-mean
// for units and keywords, one error (no knock-on errors) for a misspelling, and the fix each one
// carries. The sheets are small invented examples of the Tinmoor Works demo plant.
import { describe, expect, it } from 'vitest'
import { checkModel, parseModel } from '../../shared/sheet/index'
import { DiagnosticList, type Diagnostic, type DiagnosticFix } from '../../shared/sheet/diagnostics'
import { checkUnits } from '../../shared/sheet/unit-check'
import { suggestUnit } from '../../shared/sheet/unit-suggest'

/** the text with a fix applied (one line, columns 1-based, end exclusive) */
function applyFix(text: string, fix: DiagnosticFix): string {
  const lines = text.split('\n')
  const l = lines[fix.range.line - 1]
  lines[fix.range.line - 1] = l.slice(0, fix.range.column - 1) + fix.text + l.slice(fix.range.endColumn - 1)
  return lines.join('\n')
}

const only = (text: string): Diagnostic => {
  const ds = checkModel(text).diagnostics
  expect(ds, JSON.stringify(ds)).toHaveLength(1)
  return ds[0]
}

const CHARGER = `model "charger"
param k = 0.2 [1/s] in [0, 1]
state v = 1 [V]
let w = v * sqrt(v) [V]
dv/dt = -k * (v - w)
output y = v`

describe('unit mismatches in the declared units', () => {
  it('names both sides as declared (V and V^1.5), at the columns of the right side', () => {
    const d = only(CHARGER)
    expect(d).toMatchObject({ line: 4, column: 9, endColumn: 20, severity: 'error' })
    expect(d.message).toBe('unit mismatch: the left side let w is in V (as declared), the right side in V^1.5')
  })

  it('a derivative: the state unit per the sheet time unit against the right side, in prefixed and offset units', () => {
    const text = `model "kiln wall"
time [min]
param UA = 0.4 [kW/K] in [0, 5]
input T_in = 20 [degC]
state T = 20 [degC]
dT/dt = UA * (T_in - T)
output temp = T`
    const d = only(text)
    expect(d).toMatchObject({ line: 6, column: 9, endColumn: 24 })
    expect(d.message).toBe("unit mismatch: the left side dT/dt is in degC/min (T in degC, per min), the right side in kW*degC/K")
    // with a heat capacity in kJ/K the sheet checks (kW*degC/K / (kJ/K) = degC/s)
    expect(checkModel(text.replace("dT/dt = UA * (T_in - T)", "dT/dt = UA * (T_in - T) / C").replace('state T', 'param C = 80 [kJ/K] fixed\nstate T')).diagnostics).toEqual([])
  })

  it('the time t counts in the sheet time unit; sums name both sides as declared', () => {
    const d = only(`time [h]\nconst tau = 1 [h]\nstate x = 0 [m]\nlet a = t [m]\ndx/dt = a / tau\noutput y = x`)
    expect(d.message).toBe('unit mismatch: the left side let a is in m (as declared), the right side in h')
    const s = only(`input P = 1 [kW]\nparam k = 1 [1/s] in [0, 2]\nstate E = 0 [kWh]\ndE/dt = P - k\noutput y = E`)
    expect(s).toMatchObject({ line: 4, column: 9, endColumn: 14, message: 'difference of unlike units: kW and 1/s' })
  })

  it('falls back to SI base units only where no declared form is known', () => {
    const m = parseModel(CHARGER.replace('let w = v * sqrt(v) [V]', 'let w = v [V]')).model!
    m.lets[0] = { ...m.lets[0], expr: { k: 'bin', op: '*', a: { k: 'x', i: 0 }, b: { k: 'x', i: 0 }, s: [9, 14] } }
    const plain = new DiagnosticList()
    checkUnits(m, plain)
    expect(plain.items.map((x) => x.message)).toEqual(['unit mismatch: the left side let w is in V (as declared), the right side in V^2'])
    // the same check with the declared forms taken away: SI base units (V = kg*m^2/(s^3*A), BIPM SI Brochure 2019, table 4)
    const bare = { ...m.states[0].unit!, atoms: undefined }
    m.states[0] = { ...m.states[0], unit: bare }
    m.lets[0] = { ...m.lets[0], unit: { ...m.lets[0].unit!, atoms: undefined } }
    const si = new DiagnosticList()
    checkUnits(m, si)
    expect(si.items.map((x) => x.message)).toEqual(['unit mismatch: the left side let w is in kg*m^2/(s^3*A) (as declared), the right side in kg^2*m^4/(s^6*A^2)'])
  })
})

describe('did you mean, for units', () => {
  // [written, message, the unit text the fix writes]; unit names as mathjs knows them (mathjs.org, "Units")
  const cases: [string, string, string][] = [
    ['kw', "unknown unit 'kw'; did you mean 'kW'?", 'kW'],
    ['KW', "unknown unit 'KW'; did you mean 'kW'?", 'kW'],
    ['degc', "unknown unit 'degc'; did you mean 'degC'?", 'degC'],
    ['kpa', "unknown unit 'kpa'; did you mean 'kPa'?", 'kPa'],
    ['m/s2', "unknown unit 's2' in 'm/s2'; did you mean 'm/s^2'?", 'm/s^2'],
    ['N*m/kw', "unknown unit 'kw' in 'N*m/kw'; did you mean 'N*m/kW'?", 'N*m/kW'],
    ['Nm', "unknown unit 'Nm'; did you mean 'N*m'?", 'N*m'],
    ['bars', "unknown unit 'bars'; did you mean 'bar'?", 'bar'],
  ]
  for (const [written, message, fixed] of cases) {
    it(`[${written}] → [${fixed}]`, () => {
      const text = `model "m"\nparam c = 1 [${written}] fixed\nstate x = 1\ndx/dt = -x\noutput y = x`
      const d = only(text)
      expect(d).toMatchObject({ line: 2, column: 13, endColumn: 15 + written.length, severity: 'error', message })
      expect(d.fix).toEqual({ title: `Change to '${fixed}'`, range: { line: 2, column: 14, endColumn: 14 + written.length }, text: fixed })
      expect(checkModel(applyFix(text, d.fix!)).diagnostics).toEqual([])
    })
  }

  it('the sheet’s own units come first', () => {
    expect(suggestUnit('gall', ['gal'])).toBe('gal')
    expect(suggestUnit('gall')).not.toBe('gal')
    const text = `model "m"\ninput q = 1 [gal/min]\nparam c = 1 [gall/min] fixed\nstate x = 1\ndx/dt = -x\noutput y = x`
    expect(only(text).message).toBe("unknown unit 'gall' in 'gall/min'; did you mean 'gal/min'?")
  })

  it('no guess for a unit far from every known one', () => {
    const d = only(`model "m"\nparam c = 1 [furlongs] fixed\nstate x = 1\ndx/dt = -x\noutput y = x`)
    expect(d.message).toBe("unknown unit 'furlongs'")
    expect(d.fix).toBeUndefined()
  })

  it('a power written as a digit (m3/s) is read, with a warning and the ^ form as its fix', () => {
    const text = `model "m"\ninput q = 1 [m3/s]\nparam A = 2 [m^2] fixed\nstate h = 1 [m]\ndh/dt = q / A\noutput y = h`
    const r = checkModel(text)
    expect(r.ok).toBe(true)
    expect(r.diagnostics).toEqual([{
      line: 2, column: 13, endColumn: 19, severity: 'warning', message: "unit 'm3/s': write powers with ^; did you mean 'm^3/s'?",
      fix: { title: "Change to 'm^3/s'", range: { line: 2, column: 14, endColumn: 18 }, text: 'm^3/s' },
    }])
    expect(checkModel(applyFix(text, r.diagnostics[0].fix!)).diagnostics).toEqual([])
  })
})

describe('a misspelt keyword: one error, no knock-on errors', () => {
  const SUMP = `model "sump"
param k = 0.2 [1/s] in [0, 1]
input q = 1e-3 [m^3/s] hold
param A = 2 [m^2] fixed
state h = 1 [m]
dh/dt = q / A - k * h
output level = h [m]`
  const cases: [string, string, string][] = [
    ['param k', 'parm k', 'param'],
    ['state h', 'stat h', 'state'],
    ['input q', 'inptu q', 'input'],
    ['output level', 'ouptut level', 'output'],
  ]
  for (const [right, wrong, kw] of cases) {
    it(`${wrong.split(' ')[0]} → ${kw}`, () => {
      const text = SUMP.replace(right, wrong)
      const line = text.split('\n').findIndex((l) => l.startsWith(wrong)) + 1
      const typo = wrong.split(' ')[0]
      const d = only(text)
      expect(d).toEqual({
        line, column: 1, endColumn: typo.length + 1, severity: 'error', message: `unknown keyword '${typo}'; did you mean '${kw}'?`,
        fix: { title: `Change to '${kw}'`, range: { line, column: 1, endColumn: typo.length + 1 }, text: kw },
      })
      expect(checkModel(applyFix(text, d.fix!)).diagnostics).toEqual([])
    })
  }

  it('a keyword far from every keyword names them all and suggests nothing', () => {
    const d = checkModel(SUMP + '\nwidget w = 1').diagnostics
    expect(d).toEqual([expect.objectContaining({ line: 8, message: expect.stringMatching(/^unknown keyword 'widget'; a line starts with model, time/) })])
    expect(d[0].fix).toBeUndefined()
  })

  it('a misspelt unit or modifier still declares its name', () => {
    expect(only(SUMP.replace('[m^2] fixed', '[m^2] fixd')).message).toBe(`unexpected 'fixd' in a param declaration (allowed: fixed, in, then "description") (did you mean 'fixed'?)`)
    expect(only(SUMP.replace('state h = 1 [m]', 'state h = 1 [Ohm]')).message).toBe("unknown unit 'Ohm'; did you mean 'ohm'?")
    expect(only(SUMP.replace('output level = h [m]', 'output level = h [mtr]')).line).toBe(7)
  })
})

describe('other problems with one obvious fix', () => {
  const OK = `model "tank"\nparam k = 0.1 [1/s] in [0, 1]\nstate h = 1 [m]\ndh/dt = -k * h\noutput level = h [m]`
  const fixes: [string, string, string, string][] = [
    // [from, to, message, fix text]
    ["dh/dt = -k * h", "dh/dt = -kk * h", "unknown name 'kk' (did you mean 'k'?)", 'k'],
    ["dh/dt = -k * h", "dh/dt = -k * sqr(h) / sqrt(1 [m])".replace(' / sqrt(1 [m])', ''), "unknown function 'sqr' (did you mean 'sqrt'?)", 'sqrt'],
    ['output level = h [m]', 'level = h', "unknown statement: to define 'level' write let level = …, or dlevel/dt = … for a state's derivative", 'let level'],
  ]
  for (const [from, to, message, fix] of fixes) {
    it(message, () => {
      const text = OK.replace(from, to)
      const d = checkModel(text).diagnostics.find((x) => x.message === message)
      expect(d, JSON.stringify(checkModel(text).diagnostics)).toBeDefined()
      expect(d!.fix?.text).toBe(fix)
      expect(d!.fix!.range).toEqual({ line: d!.line, column: d!.column, endColumn: d!.endColumn })
      expect(checkModel(applyFix(text, d!.fix!)).diagnostics.filter((x) => x.severity === 'error' && x.message === message)).toEqual([])
    })
  }
})
