/**
 * Measured traces from CSV text, shared by the CLI and the server's dataset upload. Pure TypeScript
 * (csv-records.ts splits the records in one linear pass; RFC 4180 quoting rules).
 *
 * - A header row names the columns; a unit may follow in brackets: `level [cm]`, `temp [degC]`.
 * - Time: the column named `t` or `time` (any case), else the first column. Numbers are seconds unless
 *   the header gives a unit (`t [min]`); ISO-8601 timestamps (2026-03-01T08:00:00Z, also with a space
 *   instead of T, without seconds or zone — read as UTC) become seconds from the first sample.
 * - Delimiter: `,`, `;` or tab, from the header line; a decimal comma is recognised when numeric cells
 *   look like `1,25` — unquoted when the delimiter is not a comma, quoted (`"1,25"`) when it is.
 * - A delimiter ending every line (or the header only, or the data rows only) adds no column.
 * - Empty cells, `NaN`, `NA`, `n/a` and `-` are missing values (NaN); the fit skips them.
 * - Rows are counted as in the file, the header being row 1. Errors say row and column; the problems
 *   of the rows and cells are all collected (the first MAX_REPORTED are kept) and reported together.
 */
import { CsvRecords } from './csv-records'
import { timeScaleSeconds } from './units'

export interface CsvColumn {
  name: string
  /** the unit written in the header, '' when none */
  unit: string
  values: Float64Array
  /** non-strict parsing: why this column cannot be used (text in it, no numeric value), else null */
  issue: CsvIssue | null
}

export interface CsvTable {
  time: { name: string; unit: string; /** seconds from the time origin */ values: Float64Array; iso: boolean }
  columns: CsvColumn[]
  /** file row (1-based, header = 1) of each sample */
  rows: Int32Array
  delimiter: string
  decimalComma: boolean
  warnings: string[]
}

export interface CsvIssue {
  row: number | null
  column: string | null
  message: string
}

/** Problems of one file kept for a reply (the count of all is reported beside them). */
export const MAX_REPORTED = 50

/** A refused file: its first problem as message, row and column; every kept problem in `issues`. */
export class CsvError extends Error implements CsvIssue {
  readonly row: number | null
  readonly column: string | null
  readonly detail: string
  /** the file's problems, in file order (at most MAX_REPORTED) */
  readonly issues: CsvIssue[]
  /** how many problems the file has in all */
  readonly total: number
  constructor(issue: CsvIssue | CsvIssue[], file?: string, total?: number) {
    const list = Array.isArray(issue) ? issue : [issue]
    const first = list[0]
    const where = [file, first.row != null ? `row ${first.row}` : null, first.column != null ? `column '${first.column}'` : null]
      .filter(Boolean).join(', ')
    const all = total ?? list.length
    const more = all > 1 ? ` (and ${all - 1} more problem${all > 2 ? 's' : ''})` : ''
    super(`${where ? `${where}: ${first.message}` : first.message}${more}`)
    this.name = 'CsvError'
    this.row = first.row
    this.column = first.column
    this.detail = first.message
    this.issues = list
    this.total = all
  }
}

export interface CsvOptions {
  /** used in messages */
  file?: string
  /** lines before the text (comment lines removed by the caller): added to every row number */
  rowOffset?: number
  /** default 2 000 000 data rows */
  maxRows?: number
  /** default MAX_COLUMNS, time column included */
  maxColumns?: number
  /** a gap warning when a time step exceeds this multiple of the median step (default 5) */
  gapFactor?: number
  /**
   * true (default): text in any value column or an all-empty column is an error. false: such a column
   * carries its `issue` and is an error only when used (experimentFromTable), so notes columns pass.
   */
  strict?: boolean
}

/** most columns a trace file may have (the time column included) */
export const MAX_COLUMNS = 1000

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/
const NUMBER_COMMA = /^[+-]?(\d+,?\d*|,\d+)([eE][+-]?\d+)?$/
const ISO = /^(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2}(?:\.\d+)?))?)?\s*(Z|[+-]\d{2}:?\d{2})?$/
const HEADER = /^(.*?)\s*\[([^\]]*)\]\s*$/

export function parseHeader(text: string): { name: string; unit: string } {
  const t = text.trim()
  const m = HEADER.exec(t)
  return m ? { name: m[1].trim(), unit: m[2].trim() } : { name: t, unit: '' }
}

function isoSeconds(s: string): number {
  const m = ISO.exec(s)
  if (!m) return NaN
  const [, y, mo, d, h = '00', mi = '00', sec = '00', zone] = m
  let ms = Date.UTC(+y, +mo - 1, +d, +h, +mi, 0) + parseFloat(sec) * 1000
  if (zone && zone !== 'Z') {
    const sign = zone[0] === '-' ? -1 : 1
    const digits = zone.slice(1).replace(':', '')
    ms -= sign * (+digits.slice(0, 2) * 60 + +digits.slice(2)) * 60000
  }
  return ms / 1000
}

/** Cells read as a missing value (case-insensitive, after trimming). */
const MISSING = new Set(['', 'nan', 'na', 'n/a', '-'])

/** Whether numeric cells of the first rows are written with a decimal comma (`1,25`). */
function hasDecimalComma(nRows: number, nCol: number, cellOf: (k: number, c: number) => string): boolean {
  for (let k = 0; k < nRows; k++) {
    for (let c = 0; c < nCol; c++) {
      const s = cellOf(k, c).trim()
      if (s.includes(',') && NUMBER_COMMA.test(s)) return true
    }
  }
  return false
}

function detectDelimiter(headerLine: string): string {
  const counts: [string, number][] = [';', '\t', ','].map((d) => [d, headerLine.split(d).length - 1])
  counts.sort((a, b) => b[1] - a[1])
  return counts[0][1] > 0 ? counts[0][0] : ','
}

export function parseCsv(text: string, opts: CsvOptions = {}): CsvTable {
  const off = opts.rowOffset ?? 0
  const fail = (row: number | null, column: string | null, message: string): never => {
    throw new CsvError([...problems, { row: row === null ? null : row + off, column, message }], opts.file, total + 1)
  }
  // problems of rows and cells: collected, the file refused at the end with all of them
  const problems: CsvIssue[] = []
  let total = 0
  const report = (row: number | null, column: string | null, message: string) => {
    total++
    if (problems.length < MAX_REPORTED) problems.push({ row: row === null ? null : row + off, column, message })
  }
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text
  if (body.trim() === '') fail(null, null, 'the file is empty')
  const firstLine = body.slice(0, Math.max(0, body.search(/\r?\n/)) || body.length)
  const delimiter = detectDelimiter(firstLine)
  // the header alone first: a file of a million columns is refused before its rows are split
  const maxColumns = opts.maxColumns ?? MAX_COLUMNS
  const headerOnly = new CsvRecords(firstLine, delimiter).cells(0)
  if (headerOnly.length > maxColumns) fail(1, null, `too many columns: the header has ${headerOnly.length}, the limit is ${maxColumns} columns`)
  const records = new CsvRecords(body, delimiter)
  // header (a delimiter ending the header line adds no column)
  let headerCells = records.count > 0 ? records.cells(0) : []
  if (headerCells.length > 1 && headerCells[headerCells.length - 1].trim() === '') headerCells = headerCells.slice(0, -1)
  if (headerCells.length === 0 || headerCells.every((c) => c.trim() === '')) fail(1, null, 'the header row is empty')
  const headers = headerCells.map(parseHeader)
  const seen = new Map<string, number>()
  headers.forEach((h, i) => {
    if (h.name === '') return report(1, `#${i + 1}`, `column ${i + 1} has no name in the header row`)
    const key = h.name.toLowerCase()
    if (seen.has(key)) return report(1, h.name, `duplicate column name (columns ${seen.get(key)! + 1} and ${i + 1})`)
    seen.set(key, i)
  })
  if (total > 0) throw new CsvError(problems, opts.file, total)
  const nCol = headers.length
  // data records (blank lines skipped, rows counted as in the file; a trailing delimiter adds no field)
  const maxRows = opts.maxRows ?? 2_000_000
  // record index of each data row (the file's row number is record index + 1)
  let recIdx = new Int32Array(Math.max(0, records.count - 1))
  let nData = 0
  for (let r = 1; r < records.count; r++) {
    if (records.isBlank(r)) continue
    const w = records.width(r)
    if (w !== nCol && !(w === nCol + 1 && records.cell(r, nCol).trim() === '')) {
      report(r + 1, null, `the row has ${w} field(s), the header has ${nCol}`)
      continue
    }
    recIdx[nData++] = r
    if (nData > maxRows) fail(r + 1, null, `too many rows: the limit is ${maxRows} data rows`)
  }
  recIdx = recIdx.subarray(0, nData)
  if (nData === 0) fail(2, null, 'the file has a header but no data rows')
  const cellOf = (k: number, c: number) => records.cell(recIdx[k], c)
  // time column
  let tCol = headers.findIndex((h) => h.name.toLowerCase() === 't' || h.name.toLowerCase() === 'time')
  const named = tCol >= 0
  if (!named) tCol = 0
  const firstTime = cellOf(0, tCol).trim()
  const iso = ISO.test(firstTime)
  // decimal comma: unquoted cells like 1,25 when the delimiter is not a comma, quoted "1,25" when it is
  const decimalComma = hasDecimalComma(Math.min(50, nData), nCol, cellOf)
  const num = (s: string): number => {
    const t = s.trim()
    if (MISSING.has(t.toLowerCase())) return NaN
    const u = decimalComma ? t.replace(',', '.') : t
    if (!NUMBER.test(u)) return Number.POSITIVE_INFINITY // marker: not a number
    return Number(u)
  }
  if (!iso && !Number.isFinite(num(firstTime))) {
    if (!named) {
      fail(recIdx[0] + 1, headers[0].name, `no time column: name one column 't' or 'time' or put the time first (found '${firstTime}', not a number or an ISO-8601 time)`)
    }
    if (total === 0) fail(recIdx[0] + 1, headers[tCol].name, `the time '${firstTime}' is not a number or an ISO-8601 time`)
  }
  const tHeader = headers[tCol]
  let tScale = 1
  if (tHeader.unit !== '') {
    if (iso) fail(1, tHeader.name, 'a time column of ISO-8601 timestamps takes no unit')
    const sc = timeScaleSeconds(tHeader.unit)
    if (sc === null) fail(1, `${tHeader.name} [${tHeader.unit}]`, `'${tHeader.unit}' is not a unit of time`)
    tScale = sc!
  }
  const n = nData
  const time = new Float64Array(n)
  const rows = new Int32Array(n)
  let origin = Number.NaN
  // the last readable time, for the order checks
  let lastT = Number.NaN
  let lastRow = 0
  for (let k = 0; k < n; k++) {
    const row = recIdx[k] + 1
    rows[k] = row + off
    const s = cellOf(k, tCol).trim()
    let v: number
    if (iso) {
      v = isoSeconds(s)
      if (!Number.isFinite(v)) { report(row, tHeader.name, `'${s}' is not an ISO-8601 time like the first sample's`); time[k] = NaN; continue }
      if (Number.isNaN(origin)) origin = v
      v -= origin
    } else {
      v = num(s)
      if (Number.isNaN(v)) { report(row, tHeader.name, 'the time cell is empty (a missing time)'); time[k] = NaN; continue }
      if (!Number.isFinite(v)) { report(row, tHeader.name, `'${s}' is not a number`); time[k] = NaN; continue }
      v *= tScale
    }
    if (v === lastT) report(row, tHeader.name, `duplicate time ${s} (same as row ${lastRow + off})`)
    else if (v < lastT) report(row, tHeader.name, `time is not increasing (${s} after row ${lastRow + off}'s value)`)
    time[k] = v
    lastT = v
    lastRow = row
  }
  // value columns
  const columns: CsvColumn[] = []
  for (let c = 0; c < nCol; c++) {
    if (c === tCol) continue
    const h = headers[c]
    const values = new Float64Array(n)
    let count = 0
    let issue: CsvIssue | null = null
    for (let k = 0; k < n; k++) {
      const s = cellOf(k, c)
      const v = num(s)
      if (v === Number.POSITIVE_INFINITY) {
        const here = { row: rows[k], column: h.name, message: `'${s.trim()}' is not a number` }
        if (opts.strict !== false) report(rows[k] - off, here.column, here.message)
        issue ??= here
        values[k] = NaN
        continue
      }
      values[k] = v
      if (!Number.isNaN(v)) count++
    }
    if (issue) values.fill(NaN)
    if (!issue && count === 0) {
      issue = { row: null, column: h.name, message: 'the column has no numeric value (every cell is empty or a missing-value mark)' }
      if (opts.strict !== false) report(issue.row, issue.column, issue.message)
    }
    columns.push({ name: h.name, unit: h.unit, values, issue })
  }
  if (total > 0) throw new CsvError(problems, opts.file, total)
  if (columns.length === 0) fail(1, null, 'the file has a time column but no data columns')
  // gap warnings
  const warnings: string[] = []
  if (n > 2) {
    const steps = new Float64Array(n - 1)
    for (let k = 0; k + 1 < n; k++) steps[k] = time[k + 1] - time[k]
    const median = kthSmallest(steps, Math.floor(steps.length / 2))
    const factor = opts.gapFactor ?? 5
    let reported = 0
    let total = 0
    for (let k = 0; k + 1 < n; k++) {
      const dt = time[k + 1] - time[k]
      if (dt > factor * median) {
        total++
        if (reported < 5) {
          warnings.push(`gap in time between rows ${rows[k]} and ${rows[k + 1]}: ${fmt(dt)} s, ${fmt(dt / median)} times the usual step`)
          reported++
        }
      }
    }
    if (total > reported) warnings.push(`${total - reported} more gap(s) in time not listed`)
  }
  return { time: { name: tHeader.name, unit: iso ? 'ISO-8601' : tHeader.unit || 's', values: time, iso }, columns, rows, delimiter, decimalComma, warnings }
}

/**
 * The k-th smallest value (0-based) in expected linear time, reordering `a`: Hoare's FIND (C. A. R.
 * Hoare, "Algorithm 65: Find", Commun. ACM 4 (1961) 321–322) with the middle element as pivot.
 */
function kthSmallest(a: Float64Array, k: number): number {
  let lo = 0
  let hi = a.length - 1
  while (lo < hi) {
    const pivot = a[(lo + hi) >> 1]
    let i = lo
    let j = hi
    while (i <= j) {
      while (a[i] < pivot) i++
      while (a[j] > pivot) j--
      if (i <= j) {
        const t = a[i]
        a[i] = a[j]
        a[j] = t
        i++
        j--
      }
    }
    if (k <= j) hi = j
    else if (k >= i) lo = i
    else return a[k]
  }
  return a[k]
}

/** What an import preview shows before a file is saved. */
export interface CsvPreview {
  delimiter: string
  decimal: '.' | ','
  /** header names and units (a trailing delimiter's empty column left out) */
  columns: { name: string; unit: string }[]
  /** the column read as time, null when the header has none usable */
  timeColumn: string | null
  /** the first data rows as written (cells as text) */
  firstRows: string[][]
  /** data rows (blank lines not counted) */
  rowCount: number
  /** the file's problems as parseCsv reports them (first MAX_REPORTED), and how many in all */
  problems: CsvIssue[]
  total: number
  warnings: string[]
}

/** Header, units, first rows, separator and decimal of a file, with all its problems (no exception). */
export function inspectCsv(text: string, opts: CsvOptions & { rows?: number } = {}): CsvPreview {
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text
  const firstLine = body.slice(0, Math.max(0, body.search(/\r?\n/)) || body.length)
  const delimiter = detectDelimiter(firstLine)
  const parsed = tryParseCsv(text, opts)
  const records = new CsvRecords(body.length > 1_000_000 ? body.slice(0, 1_000_000) : body, delimiter)
  let header = records.count > 0 ? records.cells(0) : []
  if (header.length > 1 && header[header.length - 1].trim() === '') header = header.slice(0, -1)
  const columns = header.slice(0, MAX_COLUMNS).map(parseHeader)
  const nCol = columns.length
  const data: number[] = []
  let rowCount = 0
  for (let r = 1; r < records.count; r++) {
    if (records.isBlank(r)) continue
    rowCount++
    if (data.length < Math.max(50, opts.rows ?? 10)) data.push(r)
  }
  const cellsOf = (r: number) => {
    const c = records.cells(r)
    return c.length === nCol + 1 && c[nCol].trim() === '' ? c.slice(0, nCol) : c
  }
  const timeColumn = parsed.ok ? parsed.table.time.name
    : columns.find((h) => h.name.toLowerCase() === 't' || h.name.toLowerCase() === 'time')?.name ?? columns[0]?.name ?? null
  const decimalComma = parsed.ok ? parsed.table.decimalComma : hasDecimalComma(data.length, nCol, (k, c) => records.cell(data[k], c) ?? '')
  return {
    delimiter, decimal: decimalComma ? ',' : '.', columns, timeColumn,
    firstRows: data.slice(0, opts.rows ?? 10).map(cellsOf),
    rowCount: parsed.ok ? parsed.table.rows.length : rowCount,
    problems: parsed.ok ? [] : parsed.errors, total: parsed.ok ? 0 : parsed.total,
    warnings: parsed.ok ? parsed.table.warnings : [],
  }
}

/** parseCsv without throwing: the table or the issue. */
export function tryParseCsv(text: string, opts: CsvOptions = {}): { ok: true; table: CsvTable } | { ok: false; error: CsvIssue; errors: CsvIssue[]; total: number } {
  try {
    return { ok: true, table: parseCsv(text, opts) }
  } catch (e) {
    if (e instanceof CsvError) return { ok: false, error: { row: e.row, column: e.column, message: e.detail }, errors: e.issues, total: e.total }
    throw e
  }
}

function fmt(v: number): string {
  return String(Number(v.toPrecision(6)))
}
