/** CSV traces: header units, time column rules, ISO-8601 time, delimiters, and every bad-input error. */
import { describe, expect, it } from 'vitest'
import { parseCsv, tryParseCsv, CsvError } from '../../shared/data/csv'
import { unitConversion } from '../../shared/data/units'
import { experimentFromTable } from '../../shared/data/experiment'
import { compileModel } from '../../shared/sheet'

function err(text: string, opts = {}): CsvError {
  try {
    parseCsv(text, { file: 'trace.csv', ...opts })
  } catch (e) {
    if (e instanceof CsvError) return e
    throw e
  }
  throw new Error('expected a CsvError')
}

describe('parseCsv', () => {
  it('reads headers with units, the time column first, empty cells as NaN', () => {
    const t = parseCsv('t [min],level [cm],temp [degC]\n0,10,20\n1,,21\n2,12.5,NaN\n')
    expect(Array.from(t.time.values)).toEqual([0, 60, 120])
    expect(t.time.unit).toBe('min')
    expect(t.columns.map((c) => [c.name, c.unit])).toEqual([['level', 'cm'], ['temp', 'degC']])
    expect(Number.isNaN(t.columns[0].values[1])).toBe(true)
    expect(Number.isNaN(t.columns[1].values[2])).toBe(true)
    expect(Array.from(t.rows)).toEqual([2, 3, 4])
  })
  it('finds a column named time anywhere', () => {
    const t = parseCsv('flow,Time [h],y\n1,0,5\n2,0.5,6\n')
    expect(Array.from(t.time.values)).toEqual([0, 1800])
    expect(t.columns.map((c) => c.name)).toEqual(['flow', 'y'])
  })
  it('turns ISO-8601 timestamps into seconds from the first sample', () => {
    const t = parseCsv('time,y\n2026-03-01T08:00:00Z,1\n2026-03-01T08:00:30Z,2\n2026-03-01 09:00,3\n2026-03-01T10:30:00+01:00,4\n')
    expect(Array.from(t.time.values)).toEqual([0, 30, 3600, 5400])
  })
  it('detects semicolons with a decimal comma, and tabs', () => {
    const t = parseCsv('t;y\n0;1,5\n1;2,25\n')
    expect(t.delimiter).toBe(';')
    expect(t.decimalComma).toBe(true)
    expect(Array.from(t.columns[0].values)).toEqual([1.5, 2.25])
    const u = parseCsv('t\ty\n0\t1.5\n1\t2\n')
    expect(u.delimiter).toBe('\t')
    expect(Array.from(u.columns[0].values)).toEqual([1.5, 2])
  })
  it('warns about gaps in time', () => {
    const rows = Array.from({ length: 20 }, (_, i) => `${i < 10 ? i : i + 30},${i}`).join('\n')
    const t = parseCsv(`t,y\n${rows}\n`)
    expect(t.warnings).toHaveLength(1)
    expect(t.warnings[0]).toMatch(/gap in time between rows 11 and 12: 31 s/)
  })
  it('skips blank lines but keeps file row numbers', () => {
    const t = parseCsv('t,y\n0,1\n\n1,2\n')
    expect(Array.from(t.rows)).toEqual([2, 4])
  })
})

describe('parseCsv errors name the row and column', () => {
  it('empty file', () => {
    expect(err('').message).toBe('trace.csv: the file is empty')
    expect(err('  \n\n').row).toBeNull()
  })
  it('no time column', () => {
    const e = err('name,y\npump,1\nvalve,2\n')
    expect(e.message).toMatch(/trace.csv, row 2, column 'name': no time column/)
  })
  it('non-increasing and duplicate time', () => {
    expect(err('t,y\n0,1\n2,2\n1,3\n').message).toMatch(/row 4, column 't': time is not increasing/)
    expect(err('t,y\n0,1\n1,2\n1,3\n').message).toMatch(/row 4, column 't': duplicate time 1 \(same as row 3\)/)
  })
  it('text in a numeric column', () => {
    const e = err('t,level\n0,1\n1,high\n')
    expect([e.row, e.column]).toEqual([3, 'level'])
    expect(e.message).toMatch(/'high' is not a number/)
  })
  it('ragged rows', () => {
    expect(err('t,a,b\n0,1,2\n1,2\n').message).toMatch(/row 3: the row has 2 field\(s\), the header has 3/)
  })
  it('duplicate headers', () => {
    expect(err('t,y [m],y [cm]\n0,1,2\n').message).toMatch(/row 1, column 'y': duplicate column name \(columns 2 and 3\)/)
  })
  it('all-NaN column', () => {
    expect(err('t,a,b\n0,1,\n1,2,NaN\n').message).toMatch(/column 'b': the column has no numeric value/)
  })
  it('too many rows', () => {
    const rows = Array.from({ length: 11 }, (_, i) => `${i},1`).join('\n')
    expect(err(`t,y\n${rows}\n`, { maxRows: 10 }).message).toMatch(/row 12: too many rows: the limit is 10 data rows/)
  })
  it('a time unit that is not a time, and a header without data', () => {
    expect(err('t [m],y\n0,1\n').message).toMatch(/'m' is not a unit of time/)
    expect(err('t,y\n').message).toMatch(/no data rows/)
  })
  it('tryParseCsv returns the typed issue', () => {
    const r = tryParseCsv('t,y\n0,x\n')
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.error).toEqual({ row: 2, column: 'y', message: "'x' is not a number" })
  })
})

describe('units and experiments', () => {
  it('converts with mathjs, offset units as absolute temperatures', () => {
    const c = unitConversion('degC', 'K')
    expect(c.ok && c.map.a).toBeCloseTo(1, 12)
    expect(c.ok && c.map.b).toBeCloseTo(273.15, 12)
    const d = unitConversion('cm', 'm')
    expect(d.ok && d.map.a).toBeCloseTo(0.01, 15)
    expect(unitConversion('cm', 'K').ok).toBe(false)
  })
  it('builds an experiment in the sheet units and internal units', () => {
    const model = compileModel(`model "Cold store wall (invented)"
time [min]
input Q = 0 [kW] hold
param C = 2e5 [J/K] in [1e3, 1e7]
state T = 275 [K]
dT/dt = Q / C
output temp = T [degC]
`)
    const table = parseCsv('t [s],temp [degF],Q [W],note\n0,32,100,a1\n60,41,200,2\n', { strict: false })
    const { experiment, warnings } = experimentFromTable(table, model, { name: 'e', source: 'cold.csv' })
    expect(Array.from(experiment.time)).toEqual([0, 1])
    // 32 °F = 273.15 K, 41 °F = 278.15 K (NIST SP 811, Sec. B.8 conversion of Fahrenheit temperature)
    expect(experiment.outputs.temp[0]).toBeCloseTo(273.15, 9)
    expect(experiment.outputs.temp[1]).toBeCloseTo(278.15, 9)
    expect(Array.from(experiment.inputs.Q.v)).toEqual([100, 200])
    expect(warnings.some((w) => w.includes("'note'"))).toBe(true)
  })
  it('a column unit that does not fit the sheet is an error naming the column', () => {
    const model = compileModel(`model "m"
time [s]
param k = 1 [1/s] in [0.1, 10]
state x = 1 [m]
dx/dt = -k * x
output pos = x [m]
`)
    const table = parseCsv('t,pos [K]\n0,1\n1,2\n')
    expect(() => experimentFromTable(table, model, { name: 'e', source: 'p.csv' })).toThrow(/p.csv, row 1, column 'pos \[K\]'/)
    expect(() => experimentFromTable(parseCsv('t,other\n0,1\n'), model, { name: 'e', source: 'q.csv' })).toThrow(/q.csv, row 1: no output column/)
    // non-strict parsing: a text column is an error only when the sheet uses it
    const loose = parseCsv('t,pos,note\n0,1,ok\n1,oops,fine\n', { strict: false })
    expect(loose.columns[1].issue!.row).toBe(2)
    expect(loose.columns[0].issue).toEqual({ row: 3, column: 'pos', message: "'oops' is not a number" })
    expect(() => experimentFromTable(loose, model, { name: 'e', source: 'r.csv' })).toThrow("r.csv, row 3, column 'pos': 'oops' is not a number")
  })
})
