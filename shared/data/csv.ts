/**
 * Measured traces from CSV text, shared by the CLI and the server's dataset upload. Pure TypeScript
 * (csv-records.ts splits the records in one linear pass; RFC 4180 quoting rules).
 *
 * - A header row names the columns; a unit may follow in brackets: `level [cm]`, `temp [degC]`.
 * - Time: the column named `t` or `time` (any case), else the first column. Numbers are seconds unless
 *   the header gives a unit (`t [min]`); ISO-8601 timestamps (2026-03-01T08:00:00Z, also with a space
 *   instead of T, without seconds or zone — read as UTC) become seconds from the first sample.
 * - Delimiter: `,`, `;` or tab, from the header line; a decimal comma is recognised when the delimiter
 *   is not a comma and numeric cells look like `1,25`.
 * - Empty cells and `NaN` are missing values (NaN); they are skipped by the fit.
 * - Rows are counted as in the file, the header being row 1. Errors say row and column.
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

export class CsvError extends Error implements CsvIssue {
  readonly row: number | null
  readonly column: string | null
  readonly detail: string
  constructor(issue: CsvIssue, file?: string) {
    const where = [file, issue.row != null ? `row ${issue.row}` : null, issue.column != null ? `column '${issue.column}'` : null]
      .filter(Boolean).join(', ')
    super(where ? `${where}: ${issue.message}` : issue.message)
    this.name = 'CsvError'
    this.row = issue.row
    this.column = issue.column
    this.detail = issue.message
  }
}

export interface CsvOptions {
  /** used in messages */
  file?: string
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

function detectDelimiter(headerLine: string): string {
  const counts: [string, number][] = [';', '\t', ','].map((d) => [d, headerLine.split(d).length - 1])
  counts.sort((a, b) => b[1] - a[1])
  return counts[0][1] > 0 ? counts[0][0] : ','
}

export function parseCsv(text: string, opts: CsvOptions = {}): CsvTable {
  const fail = (row: number | null, column: string | null, message: string): never => {
    throw new CsvError({ row, column, message }, opts.file)
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
  // header
  const headerCells = records.count > 0 ? records.cells(0) : []
  if (headerCells.length === 0 || headerCells.every((c) => c.trim() === '')) fail(1, null, 'the header row is empty')
  const headers = headerCells.map(parseHeader)
  const seen = new Map<string, number>()
  headers.forEach((h, i) => {
    if (h.name === '') fail(1, `#${i + 1}`, `column ${i + 1} has no name in the header row`)
    const key = h.name.toLowerCase()
    if (seen.has(key)) fail(1, h.name, `duplicate column name (columns ${seen.get(key)! + 1} and ${i + 1})`)
    seen.set(key, i)
  })
  const nCol = headers.length
  // data records (blank lines skipped, rows counted as in the file)
  const maxRows = opts.maxRows ?? 2_000_000
  // record index of each data row (the file's row number is record index + 1)
  let recIdx = new Int32Array(Math.max(0, records.count - 1))
  let nData = 0
  for (let r = 1; r < records.count; r++) {
    if (records.isBlank(r)) continue
    const w = records.width(r)
    if (w !== nCol) fail(r + 1, null, `the row has ${w} field(s), the header has ${nCol}`)
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
  // decimal comma: only when the delimiter is not a comma
  let decimalComma = false
  if (delimiter !== ',') {
    outer: for (let k = 0; k < Math.min(50, nData); k++) {
      for (let c = 0; c < nCol; c++) {
        const s = cellOf(k, c).trim()
        if (s.includes(',') && NUMBER_COMMA.test(s)) {
          decimalComma = true
          break outer
        }
      }
    }
  }
  const num = (s: string): number => {
    const t = s.trim()
    if (t === '' || t.toLowerCase() === 'nan' || t.toLowerCase() === 'na') return NaN
    const u = decimalComma ? t.replace(',', '.') : t
    if (!NUMBER.test(u)) return Number.POSITIVE_INFINITY // marker: not a number
    return Number(u)
  }
  if (!iso && !Number.isFinite(num(firstTime))) {
    if (!named) {
      fail(recIdx[0] + 1, headers[0].name, `no time column: name one column 't' or 'time' or put the time first (found '${firstTime}', not a number or an ISO-8601 time)`)
    }
    fail(recIdx[0] + 1, headers[tCol].name, `the time '${firstTime}' is not a number or an ISO-8601 time`)
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
  let origin = 0
  for (let k = 0; k < n; k++) {
    const row = recIdx[k] + 1
    rows[k] = row
    const s = cellOf(k, tCol).trim()
    let v: number
    if (iso) {
      v = isoSeconds(s)
      if (!Number.isFinite(v)) fail(row, tHeader.name, `'${s}' is not an ISO-8601 time like the first sample's`)
      if (k === 0) origin = v
      v -= origin
    } else {
      v = num(s)
      if (Number.isNaN(v)) fail(row, tHeader.name, 'the time cell is empty')
      if (!Number.isFinite(v)) fail(row, tHeader.name, `'${s}' is not a number`)
      v *= tScale
    }
    if (k > 0 && v === time[k - 1]) fail(row, tHeader.name, `duplicate time ${s} (same as row ${rows[k - 1]})`)
    if (k > 0 && v < time[k - 1]) fail(row, tHeader.name, `time is not increasing (${s} after the previous row's value)`)
    time[k] = v
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
        issue = { row: rows[k], column: h.name, message: `'${s.trim()}' is not a number` }
        values.fill(NaN)
        break
      }
      values[k] = v
      if (!Number.isNaN(v)) count++
    }
    if (!issue && count === 0) issue = { row: null, column: h.name, message: 'the column has no numeric value (every cell is empty or NaN)' }
    if (issue && opts.strict !== false) fail(issue.row, issue.column, issue.message)
    columns.push({ name: h.name, unit: h.unit, values, issue })
  }
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

/** parseCsv without throwing: the table or the issue. */
export function tryParseCsv(text: string, opts: CsvOptions = {}): { ok: true; table: CsvTable } | { ok: false; error: CsvIssue } {
  try {
    return { ok: true, table: parseCsv(text, opts) }
  } catch (e) {
    if (e instanceof CsvError) return { ok: false, error: { row: e.row, column: e.column, message: e.detail } }
    throw e
  }
}

function fmt(v: number): string {
  return String(Number(v.toPrecision(6)))
}
