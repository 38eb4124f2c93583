/**
 * Reads an uploaded trace CSV (already decoded to text by upload-checks) with the shared CSV reader
 * (shared/data/csv.ts: delimiter and decimal comma, header units, time column in seconds / its own unit
 * / ISO-8601, ragged rows, duplicate headers, text in numeric columns, empty, duplicate or
 * non-increasing time, all-empty columns, row limit; every error with row and column), and adds what an
 * upload needs on top:
 * - row numbers counted in the uploaded file (the comment lines removed before the header are added back);
 * - every header unit checked with mathjs units (an unknown unit is refused at row 1, naming the column);
 * - the refusal as a 400 reply naming file, row and column, with `details: [{ row, column, message }]`;
 * - empty cells as null (JSON has no NaN).
 */
import { CsvError as SharedCsvError, parseCsv } from '../../shared/data/csv'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import { parseUnit } from '../../shared/sheet/units'
import type { DatasetWarning } from '../../shared/api/datasets'

export interface ReadColumn { name: string; header: string; unit: string; values: (number | null)[] }
export interface ReadTable {
  time: number[]
  timeMeta: { header: string; unit: string; format: 'numeric' | 'iso8601' }
  columns: ReadColumn[]
  /** file row (1-based, counting the comment lines) of each sample */
  rows: number[]
  warnings: DatasetWarning[]
}

export interface CsvProblem { row?: number; column?: string; message: string }

/**
 * A refused upload: 400 with the file, row and column of the first problem in the message and every
 * problem found (the first 50, in file order) in `details`; the message counts the others.
 */
export class UploadCsvError extends HttpError {
  constructor(filename: string, problem: CsvProblem | CsvProblem[], total?: number) {
    const list = Array.isArray(problem) ? problem : [problem]
    const first = list[0]
    const all = total ?? list.length
    const where = [first.row !== undefined ? `row ${first.row}` : null, first.column !== undefined ? `column '${first.column}'` : null].filter(Boolean).join(', ')
    const more = all > 1 ? ` (and ${all - 1} more problem${all > 2 ? 's' : ''}${all > list.length ? `; the first ${list.length} are listed` : ''})` : ''
    super(400, errorCodes.validation, `${filename}${where ? `, ${where}` : ''}: ${first.message}${more}`, list)
    this.name = 'UploadCsvError'
  }
}

const header = (name: string, unit: string) => (unit ? `${name} [${unit}]` : name)

export function readTraceCsv(text: string, opts: { filename: string; lineOffset?: number; maxRows: number }): ReadTable {
  const { filename } = opts
  const off = opts.lineOffset ?? 0
  let table: ReturnType<typeof parseCsv>
  try {
    table = parseCsv(text, { file: filename, maxRows: opts.maxRows, strict: true, rowOffset: off })
  } catch (e) {
    if (e instanceof SharedCsvError) {
      throw new UploadCsvError(filename, e.issues.map((i) => ({ ...(i.row !== null ? { row: i.row } : {}), ...(i.column !== null ? { column: i.column } : {}), message: i.message })), e.total)
    }
    throw e
  }
  const unitProblems: CsvProblem[] = []
  for (const c of table.columns) {
    if (!c.unit) continue
    const u = parseUnit(c.unit)
    if (!u.ok) unitProblems.push({ row: 1 + off, column: c.name, message: `unit '${c.unit}': ${u.message}` })
  }
  if (unitProblems.length) throw new UploadCsvError(filename, unitProblems)
  const warnings: DatasetWarning[] = []
  if (table.decimalComma) warnings.push({ message: `read with '${table.delimiter === '\t' ? 'tab' : table.delimiter}' as the delimiter and ',' as the decimal separator${table.delimiter === ',' ? ' (in quoted cells)' : ''}` })
  if (table.time.iso) warnings.push({ column: table.time.name, message: 'ISO-8601 timestamps turned into seconds from the first sample' })
  return {
    time: Array.from(table.time.values),
    timeMeta: { header: header(table.time.name, table.time.iso ? '' : table.time.unit), unit: table.time.iso ? 's' : table.time.unit || 's', format: table.time.iso ? 'iso8601' : 'numeric' },
    columns: table.columns.map((c) => ({ name: c.name, header: header(c.name, c.unit), unit: c.unit, values: Array.from(c.values, (v) => (Number.isNaN(v) ? null : v)) })),
    rows: Array.from(table.rows),
    warnings,
  }
}
