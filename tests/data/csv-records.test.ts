/** The linear CSV record splitter against RFC 4180's own examples (IETF RFC 4180, 2005, Sec. 2). */
import { describe, expect, it } from 'vitest'
import { CsvRecords } from '../../shared/data/csv-records'

const all = (text: string, d = ',') => {
  const r = new CsvRecords(text, d)
  return Array.from({ length: r.count }, (_, i) => r.cells(i))
}

describe('CSV records', () => {
  it('CRLF and LF line breaks, optional final line break (RFC 4180 rules 1–2)', () => {
    expect(all('aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n')).toEqual([['aaa', 'bbb', 'ccc'], ['zzz', 'yyy', 'xxx']])
    expect(all('aaa,bbb,ccc\nzzz,yyy,xxx')).toEqual([['aaa', 'bbb', 'ccc'], ['zzz', 'yyy', 'xxx']])
  })
  it('quoted fields with line breaks, delimiters and doubled quotes (rules 5–7)', () => {
    expect(all('"aaa","b\r\nbb","ccc"\r\nzzz,yyy,xxx')).toEqual([['aaa', 'b\r\nbb', 'ccc'], ['zzz', 'yyy', 'xxx']])
    expect(all('"aaa","b""bb","c,cc"')).toEqual([['aaa', 'b"bb', 'c,cc']])
  })
  it('empty fields, a trailing delimiter, blank lines and another delimiter', () => {
    const r = new CsvRecords('t;y\n1;\n\n2;3;', ';')
    expect(r.count).toBe(4)
    expect(r.cells(1)).toEqual(['1', ''])
    expect(r.isBlank(2)).toBe(true)
    expect(r.cells(3)).toEqual(['2', '3', ''])
  })
})
