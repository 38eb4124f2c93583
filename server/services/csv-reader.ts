/**
 * Reads an uploaded trace CSV (already decoded to text) into a time axis in seconds and numeric columns.
 *
 * - papaparse with delimiter detection (comma, semicolon, tab, bar); a decimal comma is recognised when
 *   the delimiter is not a comma and numeric-looking cells use ',' as the decimal separator.
 * - A header row; a unit may follow a name in brackets (`temp [degC]`), checked with mathjs units.
 * - The time column is the one named `t` or `time` (any case), else the first column. Numeric time is in
 *   seconds unless its header names a time unit (`t [min]`), and is converted to seconds. ISO-8601
 *   timestamps become seconds from the first sample.
 * - Refused, naming row (line of the file) and column: ragged rows, duplicate or empty headers, text in a
 *   numeric column, empty, non-increasing or duplicate time, unknown units, a column with no value, too
 *   many rows. Empty cells, NaN and NA are empty (null).
 */
import Papa from 'papaparse'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import { parseUnit, sameDims, TIME_DIMS } from '../../shared/sheet/units'
import type { DatasetWarning } from '../../shared/api/datasets'

export interface ReadColumn { name: string; header: string; unit: string; values: (number | null)[] }
export interface ReadTable {
  time: number[]
  timeMeta: { header: string; unit: string; format: 'numeric' | 'iso8601' }
  columns: ReadColumn[]
  warnings: DatasetWarning[]
}

export interface CsvProblem { row?: number; column?: string; message: string }

export class CsvError extends HttpError {
  constructor(filename: string, problems: CsvProblem[]) {
    const first = problems[0]
    const where = [first.row !== undefined ? `row ${first.row}` : null, first.column !== undefined ? `column '${first.column}'` : null].filter(Boolean).join(', ')
    const more = problems.length > 1 ? ` (and ${problems.length - 1} more problem${problems.length > 2 ? 's' : ''})` : ''
    super(400, errorCodes.validation, `${filename}${where ? `, ${where}` : ''}: ${first.message}${more}`, problems)
    this.name = 'CsvError'
  }
}

const ISO_RE = /^\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:[.,]\d+)?)?)?(?:Z|[+-]\d{2}:?\d{2})?$/
const NUM_RE = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/
const NUM_COMMA_RE = /^[+-]?\d+,\d+(?:[eE][+-]?\d+)?$/
const EMPTY = new Set(['', 'nan', 'na', 'n/a', 'null'])

export function splitHeader(h: string): { name: string; unit: string } {
  const m = /^(.*?)\s*\[([^\]]*)\]\s*$/.exec(h)
  if (m) return { name: m[1].trim(), unit: m[2].trim() }
  return { name: h.trim(), unit: '' }
}

function isoSeconds(s: string): number {
  let v = s.replace(' ', 'T').replace(',', '.')
  if (/^\d{4}-\d{2}-\d{2}$/.test(v)) v += 'T00:00:00'
  if (!/(Z|[+-]\d{2}:?\d{2})$/.test(v)) v += 'Z'
  return Date.parse(v) / 1000
}

/**
 * The delimiter: of comma, semicolon, tab and bar, the one that splits the first lines into the same
 * number (> 1) of fields most often (quotes respected); comma when none does.
 */
export function guessDelimiter(text: string): string {
  const lines = text.split(/\r\n|\n|\r/).filter((l) => l.trim() !== '').slice(0, 30)
  let best = ','
  let bestScore = 0
  for (const d of [',', ';', '\t', '|']) {
    const counts = lines.map((l) => {
      let n = 0
      let q = false
      for (const ch of l) { if (ch === '"') q = !q; else if (ch === d && !q) n++ }
      return n
    })
    if (!counts.length || counts[0] === 0) continue
    const same = counts.filter((c) => c === counts[0]).length
    const score = same * 1000 + counts[0]
    if (score > bestScore) { best = d; bestScore = score }
  }
  return best
}

export function readTraceCsv(text: string, opts: { filename: string; lineOffset?: number; maxRows: number }): ReadTable {
  const { filename } = opts
  const off = opts.lineOffset ?? 0
  const parsed = Papa.parse<string[]>(text, { delimiter: guessDelimiter(text), skipEmptyLines: false })
  const rows = parsed.data
  // drop trailing empty lines
  while (rows.length && rows[rows.length - 1].every((c) => c.trim() === '')) rows.pop()
  if (!rows.length) throw new CsvError(filename, [{ message: 'the file is empty' }])
  const delimiter = parsed.meta.delimiter
  const quoteProblem = parsed.errors.find((e) => e.type === 'Quotes')
  if (quoteProblem) throw new CsvError(filename, [{ row: (quoteProblem.row ?? 0) + off + 1, message: `unbalanced quotes: ${quoteProblem.message}` }])

  const header = rows[0].map((h) => h.trim())
  const fileRow = (i: number) => off + i + 1 // i: index into rows (0 = header)
  if (header.length < 2) {
    throw new CsvError(filename, [{ row: fileRow(0), message: `the header has ${header.length} column(s); a time column and at least one signal column are needed (delimiter found: ${JSON.stringify(delimiter)})` }])
  }
  const problems: CsvProblem[] = []
  const cols = header.map((h, j) => ({ ...splitHeader(h), header: h, j }))
  cols.forEach((c) => { if (!c.name) problems.push({ row: fileRow(0), column: `#${c.j + 1}`, message: `column ${c.j + 1} has no name in the header` }) })
  const seen = new Map<string, number>()
  cols.forEach((c) => {
    if (!c.name) return
    const key = c.name.toLowerCase()
    if (seen.has(key)) problems.push({ row: fileRow(0), column: c.name, message: `duplicate header '${c.name}' (columns ${seen.get(key)! + 1} and ${c.j + 1})` })
    else seen.set(key, c.j)
  })
  for (const c of cols) {
    if (!c.unit) continue
    const u = parseUnit(c.unit)
    if (!u.ok) problems.push({ row: fileRow(0), column: c.name, message: `unit '${c.unit}': ${u.message}` })
  }
  if (problems.length) throw new CsvError(filename, problems)

  const dataRows: { i: number; cells: string[] }[] = []
  for (let i = 1; i < rows.length; i++) {
    const r = rows[i]
    if (r.length === 1 && r[0].trim() === '') continue // blank line inside the data
    if (r.length !== header.length) {
      problems.push({ row: fileRow(i), message: `the row has ${r.length} field(s), the header has ${header.length} (ragged row)` })
      if (problems.length >= 20) break
      continue
    }
    dataRows.push({ i, cells: r })
    if (dataRows.length > opts.maxRows) {
      throw new CsvError(filename, [{ row: fileRow(i), message: `too many rows: at most ${opts.maxRows} data rows are accepted` }])
    }
  }
  if (problems.length) throw new CsvError(filename, problems)
  if (!dataRows.length) throw new CsvError(filename, [{ row: fileRow(0), message: 'the file has a header but no data rows' }])

  // decimal comma: a non-comma delimiter and numeric-looking cells with ',' decimals
  let decimalComma = false
  if (delimiter !== ',') {
    let withComma = 0
    let withDot = 0
    for (const { cells } of dataRows.slice(0, 200)) for (const c of cells) {
      const s = c.trim()
      if (NUM_COMMA_RE.test(s)) withComma++
      else if (/^[+-]?\d*\.\d+/.test(s) && NUM_RE.test(s)) withDot++
    }
    decimalComma = withComma > withDot
  }
  const num = (s: string): number | null | undefined => {
    const t = s.trim()
    if (EMPTY.has(t.toLowerCase())) return null
    const v = decimalComma ? t.replace(',', '.') : t
    if (!NUM_RE.test(v)) return undefined
    return Number(v)
  }

  // time column
  const timeIdx = Math.max(0, cols.findIndex((c) => /^(t|time)$/i.test(c.name)))
  const tc = cols[timeIdx]
  const firstTime = dataRows[0].cells[timeIdx].trim()
  const iso = ISO_RE.test(firstTime)
  let timeScale = 1
  if (!iso && tc.unit) {
    const u = parseUnit(tc.unit)
    if (!u.ok || !sameDims(u.unit.dims, TIME_DIMS)) throw new CsvError(filename, [{ row: fileRow(0), column: tc.name, message: `the time column's unit '${tc.unit}' is not a unit of time` }])
    timeScale = u.unit.scale
  }
  const time: number[] = []
  for (const { i, cells } of dataRows) {
    const s = cells[timeIdx].trim()
    let v: number
    if (iso) {
      if (!ISO_RE.test(s)) { problems.push({ row: fileRow(i), column: tc.name, message: `'${s}' is not an ISO-8601 timestamp like the first row's` }); continue }
      v = isoSeconds(s)
    } else {
      const n = num(s)
      if (n === null) { problems.push({ row: fileRow(i), column: tc.name, message: 'the time cell is empty' }); continue }
      if (n === undefined) { problems.push({ row: fileRow(i), column: tc.name, message: `'${s}' is not a number` }); continue }
      v = n * timeScale
    }
    if (!Number.isFinite(v)) { problems.push({ row: fileRow(i), column: tc.name, message: `'${s}' is not a finite time` }); continue }
    if (time.length && !(v > time[time.length - 1])) {
      problems.push({ row: fileRow(i), column: tc.name, message: v === time[time.length - 1] ? `duplicate time ${s} (the same as the row before)` : `time ${s} is not after the row before (time must increase)` })
    }
    time.push(v)
    if (problems.length >= 20) break
  }
  if (problems.length) throw new CsvError(filename, problems)
  const t0 = iso ? time[0] : 0
  const timeSeconds = iso ? time.map((v) => v - t0) : time

  const columns: ReadColumn[] = []
  for (const c of cols) {
    if (c.j === timeIdx) continue
    const values: (number | null)[] = new Array(dataRows.length)
    for (let k = 0; k < dataRows.length; k++) {
      const s = dataRows[k].cells[c.j]
      const v = num(s)
      if (v === undefined) {
        problems.push({ row: fileRow(dataRows[k].i), column: c.name, message: `'${s.trim().slice(0, 40)}' is not a number` })
        if (problems.length >= 20) break
        values[k] = null
      } else values[k] = v === null || !Number.isFinite(v) ? null : v
    }
    if (problems.length >= 20) break
    if (!values.some((v) => v !== null)) problems.push({ column: c.name, message: `column '${c.name}' has no numeric value (every cell is empty or NaN)` })
    columns.push({ name: c.name, header: c.header, unit: c.unit, values })
  }
  if (problems.length) throw new CsvError(filename, problems)
  const warnings: DatasetWarning[] = []
  if (decimalComma) warnings.push({ message: `read with '${delimiter === '\t' ? 'tab' : delimiter}' as the delimiter and ',' as the decimal separator` })
  if (iso) warnings.push({ column: tc.name, message: `ISO-8601 timestamps turned into seconds from the first sample (${new Date(t0 * 1000).toISOString()})` })
  return {
    time: timeSeconds,
    timeMeta: { header: tc.header, unit: iso ? 's' : tc.unit || 's', format: iso ? 'iso8601' : 'numeric' },
    columns,
    warnings,
  }
}
