/**
 * CSV import cases met in exported trace files: a delimiter ending every line, decimal commas in
 * quoted cells of a comma-separated file, `n/a` and `-` as missing values, and every problem of a file
 * reported at once (first 50, each with row and column). Quoting follows RFC 4180 (Y. Shafranovich,
 * "Common Format and MIME Type for Comma-Separated Values (CSV) Files", IETF RFC 4180, 2005, Sec. 2:
 * a field in double quotes may hold the delimiter). Files here are invented for the test.
 */
import { describe, expect, it } from 'vitest'
import { CsvError, MAX_REPORTED, inspectCsv, parseCsv } from '../../shared/data/csv'

function err(text: string): CsvError {
  try {
    parseCsv(text, { file: 'trace.csv' })
  } catch (e) {
    if (e instanceof CsvError) return e
    throw e
  }
  throw new Error('expected a CsvError')
}

describe('CSV import cases', () => {
  it('a delimiter ending every line, the header only, or the data rows only adds no column', () => {
    for (const text of ['t;level [m];\n0;1,5;\n1;1,6;\n', 't;level [m];\n0;1,5\n1;1,6\n', 't;level [m]\n0;1,5;\n1;1,6;\n', 't,level [m],\r\n0,1.5,\r\n1,1.6,\r\n']) {
      const t = parseCsv(text)
      expect(t.columns.map((c) => c.name), JSON.stringify(text)).toEqual(['level'])
      expect(Array.from(t.columns[0].values)).toEqual([1.5, 1.6])
    }
    // a filled extra field is still a ragged row
    expect(err('t,y,\n0,1,2\n1,2,\n').message).toBe("trace.csv, row 2: the row has 3 field(s), the header has 2")
  })

  it('quoted decimal commas in a comma-separated file (RFC 4180 quoting)', () => {
    const t = parseCsv('t,level [m],flow [m3/h]\n0,"1,25","0,5"\n"0,5","1,5",1\n1,"-2,75e-1","2,0"\n')
    expect(t.delimiter).toBe(',')
    expect(t.decimalComma).toBe(true)
    expect(Array.from(t.time.values)).toEqual([0, 0.5, 1])
    expect(Array.from(t.columns[0].values)).toEqual([1.25, 1.5, -0.275])
    expect(Array.from(t.columns[1].values)).toEqual([0.5, 1, 2])
    // without quoted commas a comma file keeps the decimal point
    expect(parseCsv('t,y\n0,1.5\n1,"2.5"\n').decimalComma).toBe(false)
  })

  it('n/a, NA, NaN, - and empty cells are missing values', () => {
    const t = parseCsv('t;a;b\n0;n/a;1\n1;-;N/A\n2;3,5;na\n3;;NaN\n4;  -  ;2\n')
    const a = Array.from(t.columns[0].values)
    const b = Array.from(t.columns[1].values)
    expect(a.map(Number.isNaN)).toEqual([true, true, false, true, true])
    expect(a[2]).toBe(3.5)
    expect(b.map(Number.isNaN)).toEqual([false, true, true, true, false])
    // a negative number is not the missing mark
    expect(Array.from(parseCsv('t,y\n0,-1\n1,-\n').columns[0].values)[0]).toBe(-1)
  })

  it('every problem of a file at once: rows, time and cells, in file order, each with row and column', () => {
    const text = 't,level,temp\n0,1,20\n1,x,21\n1,2,22\n3,4\n4,5,warm\n-,6,23\n6,7,24\n'
    const e = err(text)
    expect(e.total).toBe(5)
    expect(e.issues).toEqual([
      { row: 5, column: null, message: 'the row has 2 field(s), the header has 3' },
      { row: 4, column: 't', message: 'duplicate time 1 (same as row 3)' },
      { row: 7, column: 't', message: 'the time cell is empty (a missing time)' },
      { row: 3, column: 'level', message: "'x' is not a number" },
      { row: 6, column: 'temp', message: "'warm' is not a number" },
    ])
    expect(e.message).toBe("trace.csv, row 5: the row has 2 field(s), the header has 3 (and 4 more problems)")
  })

  it('keeps the first 50 problems and counts them all', () => {
    const rows = Array.from({ length: 120 }, (_, i) => `${i},bad${i}`)
    const e = err(`t,y\n${rows.join('\n')}\n`)
    expect(e.total).toBe(120)
    expect(MAX_REPORTED).toBe(50)
    expect(e.issues).toHaveLength(50)
    expect(e.issues[49]).toEqual({ row: 51, column: 'y', message: "'bad49' is not a number" })
  })

  it('inspectCsv: header, units, first rows, separator and decimal for a preview, with the problems', () => {
    const p = inspectCsv('t [s];level [m];note\n0;1,5;a\n1;1,6;b\n2;1,7;c\n', { rows: 2 })
    expect(p.delimiter).toBe(';')
    expect(p.decimal).toBe(',')
    expect(p.columns).toEqual([{ name: 't', unit: 's' }, { name: 'level', unit: 'm' }, { name: 'note', unit: '' }])
    expect(p.timeColumn).toBe('t')
    expect(p.firstRows).toEqual([['0', '1,5', 'a'], ['1', '1,6', 'b']])
    expect(p.rowCount).toBe(3)
    expect(p.total).toBe(3)
    expect(p.problems[0]).toEqual({ row: 2, column: 'note', message: "'a' is not a number" })
    const ok = inspectCsv('t,y,\n0,1,\n1,2,\n')
    expect(ok.total).toBe(0)
    expect(ok.columns.map((c) => c.name)).toEqual(['t', 'y'])
    expect(ok.firstRows).toEqual([['0', '1'], ['1', '2']])
    expect(ok.decimal).toBe('.')
  })
})
